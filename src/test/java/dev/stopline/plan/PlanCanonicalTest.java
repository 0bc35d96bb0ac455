package dev.stopline.plan;

import static dev.stopline.plan.PlanParserTest.VALID;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.IOException;
import java.nio.file.Path;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.MethodSource;
import org.junit.jupiter.params.provider.ValueSource;
import org.junit.jupiter.api.Test;

/** The canonical form: same meaning, same text and hash; any amendment, another hash. */
class PlanCanonicalTest {

    @ParameterizedTest
    @MethodSource("dev.stopline.plan.PlanParserTest#examplePlans")
    void canonicalJsonAndYaml_reparseToTheSameCanonicalJson(Path file) throws IOException {
        Plan plan = PlanParser.parse(file);
        String json = PlanCanonical.toJson(plan);
        assertEquals(json, PlanCanonical.toJson(PlanParser.parseJson(json)));
        assertEquals(json, PlanCanonical.toJson(PlanParser.parseYaml(PlanCanonical.toYaml(plan))));
    }

    @Test
    void sameMeaning_differentSpelling_sameHash() {
        String respelt = """
                # same plan: other key order, looks as a count, defaults omitted, flow style changed
                control: control
                sampleRatio: {}
                primary:
                  futility: {binding: false, spending: 'power:2'}
                  looks: 5
                  method: group-sequential
                  type: proportion
                  metric: orders
                  alpha: 5.0e-2
                  spending: " OBrien-Fleming"
                  maxUnitsPerArm: 6e4
                  baselineRate: 0.1
                guardrails:
                  - metric: page_load_ms
                    type: mean
                    harmful: increase
                    margin: 0.05
                    relative: true
                    tau: 0.05
                allocation:
                  control: 0.5
                  treatment: 0.5
                experiment: checkout-redesign
                """;
        assertEquals(PlanCanonical.toJson(PlanParser.parseYaml(VALID)), PlanCanonical.toJson(PlanParser.parseYaml(respelt)));
        assertEquals(PlanCanonical.sha256(PlanParser.parseYaml(VALID)), PlanCanonical.sha256(PlanParser.parseYaml(respelt)));
    }

    @ParameterizedTest
    @ValueSource(strings = {"alpha: 0.05|alpha: 0.04", "0.2, 0.4, 0.6, 0.8, 1.0|0.25, 0.5, 0.75, 1.0",
            "margin: 0.05|margin: 0.06", "binding: false|binding: true", "sides: 2|sides: 1",
            "control: 0.5, treatment: 0.5|control: 0.4, treatment: 0.6"})
    void amendment_changesTheHash(String change) {
        String[] fromTo = change.split("\\|");
        String amended = VALID.replace(fromTo[0], fromTo[1]);
        assertNotEquals(VALID, amended);
        assertNotEquals(PlanCanonical.sha256(PlanParser.parseYaml(VALID)), PlanCanonical.sha256(PlanParser.parseYaml(amended)));
    }

    @Test
    void hash_isLowerCaseHexSha256_ofTheCanonicalJson() throws Exception {
        Plan p = PlanParser.parseYaml(VALID);
        String hash = PlanCanonical.sha256(p);
        assertTrue(hash.matches("[0-9a-f]{64}"), hash);
        byte[] expected = java.security.MessageDigest.getInstance("SHA-256")
                .digest(PlanCanonical.toJson(p).getBytes(java.nio.charset.StandardCharsets.UTF_8));
        assertEquals(java.util.HexFormat.of().formatHex(expected), hash);
    }

    @Test
    void canonicalJson_writesDefaultsAndTheEffectiveTau() {
        String json = PlanCanonical.toJson(PlanParser.parseYaml(VALID.replace(", relative: true, alpha: 0.01}", "}")));
        assertTrue(json.contains("{\"metric\":\"page_load_ms\",\"type\":\"mean\",\"harmful\":\"increase\","
                + "\"margin\":0.05,\"relative\":false,\"alpha\":0.01,\"tau\":0.05}"), json);
        assertTrue(json.contains("\"looks\":5"), json);
    }

    @Test
    void invalidPlan_hasNoCanonicalForm() {
        Plan bad = new Plan("x", null, null, null, null, null, null, null);
        assertThrows(PlanException.class, () -> PlanCanonical.toJson(bad));
    }
}
