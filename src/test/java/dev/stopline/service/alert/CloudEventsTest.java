package dev.stopline.service.alert;

import dev.stopline.monitor.AlertKind;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.net.URI;
import java.time.Instant;
import java.time.OffsetDateTime;
import java.util.Iterator;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;

class CloudEventsTest {
    private static final Instant T = Instant.parse("2026-11-30T09:15:30.250Z");
    private final CloudEvents events = CloudEvents.forInstance("bookshop-eu-1");

    private static AlertEnvelope alert(AlertKind kind) {
        Map<String, Object> payload = new LinkedHashMap<>();
        payload.put("look", 3);
        payload.put("zStatistic", 2.91);
        payload.put("metric", "conversion");
        return new AlertEnvelope(AlertEnvelope.stableId("checkout-redesign", kind, "look-3"), "checkout-redesign",
                kind, T, payload);
    }

    @Test
    void event_hasEveryRequiredAttribute_asNonEmptyString() throws Exception {
        // CloudEvents 1.0 core spec: id, source, specversion, type are REQUIRED, non-empty strings
        JsonNode e = parse(events.toBytes(alert(AlertKind.EFFICACY)));
        for (String name : List.of("id", "source", "specversion", "type")) {
            assertTrue(e.hasNonNull(name) && e.get(name).isTextual() && !e.get(name).asText().isEmpty(),
                    "required attribute " + name + " in " + e);
        }
        assertEquals("1.0", e.get("specversion").asText());
    }

    @Test
    void attributeNames_areLowerCaseAlphanumeric_atMost20Characters() throws Exception {
        // CloudEvents 1.0 "Attribute Naming Convention": [a-z0-9], SHOULD be at most 20 characters
        JsonNode e = parse(events.toBytes(alert(AlertKind.GUARDRAIL)));
        for (Iterator<String> it = e.fieldNames(); it.hasNext();) {
            String name = it.next();
            assertTrue(name.matches("[a-z0-9]{1,20}"), "attribute name '" + name + "'");
        }
    }

    @Test
    void source_isTheInstanceUrn_andAUri() throws Exception {
        JsonNode e = parse(events.toBytes(alert(AlertKind.FUTILITY)));
        assertEquals("urn:stopline:daemon:bookshop-eu-1", e.get("source").asText());
        URI u = new URI(e.get("source").asText()); // spec: URI-reference
        assertEquals("urn", u.getScheme());
    }

    @ParameterizedTest
    @CsvSource({"EFFICACY, dev.stopline.alert.efficacy", "FUTILITY, dev.stopline.alert.futility",
        "GUARDRAIL, dev.stopline.alert.guardrail", "SAMPLE_RATIO, dev.stopline.alert.sample-ratio"})
    void type_isPrefixPlusKindCode_keepingTheHyphen(AlertKind kind, String expected) throws Exception {
        assertEquals(expected, parse(events.toBytes(alert(kind))).get("type").asText());
        assertEquals(kind, AlertKind.fromWireName(kind.wireName()));
    }

    @Test
    void optionalAttributes_subjectTimeContentTypeAndData_carryTheAlert() throws Exception {
        AlertEnvelope a = alert(AlertKind.SAMPLE_RATIO);
        JsonNode e = parse(events.toBytes(a));
        assertEquals("checkout-redesign", e.get("subject").asText());
        assertEquals("application/json", e.get("datacontenttype").asText());
        // RFC 3339: OffsetDateTime.parse accepts the RFC 3339 profile of ISO 8601
        assertEquals(T, OffsetDateTime.parse(e.get("time").asText()).toInstant());
        assertEquals("2026-11-30T09:15:30.250Z", e.get("time").asText());
        assertEquals(3, e.get("data").get("look").asInt());
        assertEquals(2.91, e.get("data").get("zStatistic").asDouble(), 0.0); // exact round trip of a double
        assertEquals("conversion", e.get("data").get("metric").asText());
    }

    @Test
    void id_isStablePerDecision_andDiffersBetweenDecisions() throws Exception {
        String a = parse(events.toBytes(alert(AlertKind.EFFICACY))).get("id").asText();
        String b = parse(events.toBytes(alert(AlertKind.EFFICACY))).get("id").asText();
        assertEquals(a, b, "the same decision rendered twice keeps its id");
        assertEquals(AlertEnvelope.stableId("checkout-redesign", AlertKind.EFFICACY, "look-3"), a);
        assertNotEquals(a, AlertEnvelope.stableId("checkout-redesign", AlertKind.EFFICACY, "look-4"));
        assertNotEquals(a, AlertEnvelope.stableId("gift-wrap-upsell", AlertKind.EFFICACY, "look-3"));
        assertNotEquals(a, AlertEnvelope.stableId("checkout-redesign", AlertKind.FUTILITY, "look-3"));
    }

    @Test
    void instanceNames_thatWouldNeedEscapingInAUrn_areRejected() {
        for (String bad : new String[] {"", " ", "a b", "a/b", "-lead", "ä"}) {
            assertThrows(IllegalArgumentException.class, () -> CloudEvents.forInstance(bad), bad);
        }
        assertThrows(IllegalArgumentException.class, () -> CloudEvents.forInstance(null));
    }

    @Test
    void envelope_copiesPayload_andRejectsBlankIds() {
        Map<String, Object> p = new LinkedHashMap<>();
        p.put("look", 1);
        AlertEnvelope a = new AlertEnvelope("id-1", "recommendations-v2", AlertKind.GUARDRAIL, T, p);
        p.put("look", 2);
        assertEquals(1, a.payload().get("look"), "later changes to the caller's map do not leak in");
        assertThrows(UnsupportedOperationException.class, () -> a.payload().put("x", 1));
        assertThrows(IllegalArgumentException.class,
                () -> new AlertEnvelope(" ", "x", AlertKind.GUARDRAIL, T, Map.of()));
        assertThrows(IllegalArgumentException.class,
                () -> new AlertEnvelope("id", "x", null, T, Map.of()));
        IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
                () -> AlertKind.fromWireName("sample_ratio"));
        assertFalse(e.getMessage().isEmpty());
    }

    private static JsonNode parse(byte[] json) throws Exception {
        return new ObjectMapper().readTree(json);
    }
}
