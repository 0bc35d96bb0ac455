package dev.stopline.service;

import static io.restassured.RestAssured.given;
import static org.awaitility.Awaitility.await;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.stopline.monitor.LookRecord;
import dev.stopline.service.broker.DeadLetters;
import dev.stopline.service.store.Store;
import dev.stopline.testing.Counts;
import dev.stopline.testing.KafkaTestResource;
import dev.stopline.testing.TestKafka;
import dev.stopline.testing.WebhookReceiver;
import io.quarkus.test.common.QuarkusTestResource;
import io.quarkus.test.junit.QuarkusTest;
import jakarta.inject.Inject;
import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.junit.jupiter.api.Test;

/**
 * The daemon against a real Kafka broker: records in, looks stored, dead letters and alerts out.
 * Each test uses its own experiment id on the shared topics.
 */
@QuarkusTest
@QuarkusTestResource(KafkaTestResource.class)
class DaemonKafkaTest {
    private static final String COUNTS = "stopline.counts";
    private static final Duration WAIT = Duration.ofSeconds(60);

    @Inject
    Store store;

    private static void register(String experiment) {
        given().auth().oauth2(KafkaTestResource.API_TOKEN).contentType("application/yaml").body(Counts.plan(experiment).getBytes(StandardCharsets.UTF_8)).when().post("/api/plans")
                .then().statusCode(201);
    }

    private List<LookRecord> primaryLooks(String experiment) {
        return store.looks(experiment).stream().filter(l -> LookRecord.PRIMARY.equals(l.role())).toList();
    }

    @Test
    void badRecords_eachLandInTheDeadLetterTopicWithItsReason_andTheGoodOnesAroundThemAreEvaluated() {
        String id = "it-dead-letters";
        register(id);
        // 2,000 units per arm = fraction 0.2 of 10,000 per arm on the n_c n_t/(n_c+n_t) scale: look 1
        TestKafka.send(COUNTS, id,
                Counts.proportion(id, 1, "orders", 2000, 200, 2000, 210),
                "{not json",
                "{\"experiment\":\"" + id + "\",\"sequence\":2}",
                Counts.proportion("some-other-id", 2, "orders", 10, 1, 10, 1),
                Counts.proportion(id, 2, "orders", -5, 0, 10, 1),
                Counts.proportion(id, 0, "orders", 2000, 200, 2000, 210),
                Counts.proportion(id, 3, "orders", 1900, 200, 2100, 210),
                Counts.proportion(id, 4, "orders", 4000, 400, 4000, 420),
                Counts.proportion(id, 5, "orders", 4000, 400, 4000, 420).replace("\"treatment\"", "\"variant-b\""));
        TestKafka.send(COUNTS, "never-registered", Counts.proportion("never-registered", 1, "orders", 10, 1, 10, 1));

        await().atMost(WAIT).until(() -> primaryLooks(id).size() == 2);
        Map<String, String> reasons = new TreeMap<>();
        await().atMost(WAIT).untilAsserted(() -> {
            reasons.clear();
            for (ConsumerRecord<String, byte[]> r : TestKafka.readAll("stopline.counts.dlq", Duration.ofSeconds(1))) {
                if (id.equals(r.key()) || "never-registered".equals(r.key())) {
                    reasons.put(new String(r.value(), StandardCharsets.UTF_8),
                            TestKafka.header(r, DeadLetters.REASON));
                }
            }
            assertEquals(8, reasons.size(), () -> "dead letters so far: " + reasons);
        });
        assertEquals(List.of("decreasing-count", "invalid-value", "key-mismatch", "malformed-json", "out-of-order",
                "schema", "unknown-arm", "unknown-experiment"), reasons.values().stream().sorted().toList(),
                "one dead letter per kind of bad record, each with its reason header");
        assertEquals(List.of(1L, 4L), primaryLooks(id).stream().map(LookRecord::sequence).toList(),
                "the good records around the bad ones were evaluated: looks at sequences 1 and 4");
    }

    @Test
    void duplicateSequence_isAcknowledgedWithoutASecondLook() {
        String id = "it-duplicates";
        register(id);
        String first = Counts.proportion(id, 1, "orders", 2000, 200, 2000, 210);
        TestKafka.send(COUNTS, id, first, first, first);
        TestKafka.send(COUNTS, id, Counts.proportion(id, 2, "orders", 4000, 400, 4000, 420));
        await().atMost(WAIT).until(() -> primaryLooks(id).size() == 2);
        await().pollDelay(Duration.ofSeconds(2)).atMost(WAIT).until(() -> true);
        assertEquals(List.of(1L, 2L), primaryLooks(id).stream().map(LookRecord::sequence).toList());
        assertEquals(2, store.state(id).orElseThrow().state().snapshots(), "three copies of sequence 1 count once");
    }

    @Test
    void sampleRatioMismatch_alertsOnceOnTheTopicAsCloudEventAndAtTheSignedWebhook() throws Exception {
        String id = "it-sample-ratio";
        register(id);
        // 1,100 vs 900 units: chi-square 20 on 1 df, p = 7.7e-6 < 0.001 (Commons Math ChiSquareTest agrees; see
        // SampleRatioCheckTest). It stays mismatched at the next snapshot: still one alert.
        TestKafka.send(COUNTS, id, Counts.proportion(id, 1, "orders", 1100, 110, 900, 90),
                Counts.proportion(id, 2, "orders", 2200, 220, 1800, 180));
        ObjectMapper json = new ObjectMapper();
        await().atMost(WAIT).untilAsserted(() -> {
            List<JsonNode> events = TestKafka.readAll("stopline.alerts", Duration.ofSeconds(1)).stream()
                    .filter(r -> id.equals(r.key())).map(r -> read(json, r.value())).toList();
            assertEquals(1, events.size(), "one CloudEvent for one crossing");
            JsonNode e = events.get(0);
            assertEquals("1.0", e.path("specversion").asText());
            assertEquals("dev.stopline.alert.sample-ratio", e.path("type").asText());
            assertEquals(id, e.path("subject").asText());
            assertEquals(id + "/sample-ratio/-/1", e.path("id").asText());
        });
        await().atMost(WAIT).untilAsserted(() -> assertEquals(1, WebhookReceiver.shared().verified().stream()
                .filter(d -> d.body().contains("\"subject\":\"" + id + "\"")).count(),
                "the webhook received the alert once, with a valid signature"));
        assertTrue(WebhookReceiver.shared().refused().isEmpty(), () -> "refused: " + WebhookReceiver.shared().refused());
    }

    @Test
    void mutatedRecordsBetweenGoodOnes_neverStopTheConsumer_andNoneIsTakenForAGoodOne() {
        // 40 good snapshots, each followed by a seeded mutation of itself (same sequence). A mutation that no
        // longer parses is dead-lettered with its reason; one that parses carries an already accepted sequence,
        // so it is a duplicate (acknowledged, no look) whatever else it changed. All 40 good ones are evaluated.
        String id = "it-fuzz";
        register(id);
        java.util.SplittableRandom random = new java.util.SplittableRandom(20270301);
        List<String> records = new java.util.ArrayList<>();
        Map<String, Integer> expected = new TreeMap<>();
        for (int k = 1; k <= 40; k++) {
            String good = Counts.proportion(id, k, "orders", 300L * k, 30L * k, 300L * k, 31L * k);
            records.add(good);
            int kind = random.nextInt(6);
            records.add(mutate(good, kind, random));
            String reason = kind == 0 ? "malformed-json" : kind == 1 || kind == 2 ? "invalid-value" : null;
            if (reason != null) {
                expected.merge(reason, 1, Integer::sum);
            }
        }
        TestKafka.send(COUNTS, id, records.toArray(String[]::new));
        await().atMost(WAIT).until(() -> store.state(id).map(st -> st.state().lastSequence() == 40).orElse(false));
        assertEquals(40, store.state(id).orElseThrow().state().snapshots(), "exactly the good snapshots were evaluated");
        await().atMost(WAIT).untilAsserted(() -> {
            Map<String, Integer> reasons = new TreeMap<>();
            TestKafka.readAll("stopline.counts.dlq", Duration.ofSeconds(1)).stream().filter(r -> id.equals(r.key()))
                    .forEach(r -> reasons.merge(TestKafka.header(r, DeadLetters.REASON), 1, Integer::sum));
            assertEquals(expected, reasons, "dead letters by reason");
        });
    }

    /** One seeded mutation that keeps the sequence number (so it can never pass for a later snapshot). */
    private static String mutate(String good, int kind, java.util.SplittableRandom random) {
        int arms = good.indexOf("\"arms\"");
        switch (kind) {
            case 0:
                return good.substring(0, arms + random.nextInt(good.length() - arms - 1));   // cut short
            case 1:
                return good.replaceFirst("\"units\":\\d+", "\"units\":-3");
            case 2:
                return good.replaceFirst("\"sum\":\\d+", "\"sum\":1e300");
            case 3:
                return good.replace("\"control\"", "\"kontrol\"");
            case 4:
                return good.replaceFirst("\"metrics\":\\{\"orders\":\\{[^}]*}}", "\"metrics\":{}");
            default:
                return good;                                                                 // a redelivery
        }
    }

    private static JsonNode read(ObjectMapper json, byte[] value) {
        try {
            return json.readTree(value);
        } catch (java.io.IOException e) {
            throw new IllegalStateException(e);
        }
    }
}
