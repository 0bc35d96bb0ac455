package dev.stopline.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;

class SimulateCommandTest {
    static CliRun run(String... args) {
        return CliRun.run(args);
    }

    @Test
    void json_hasTheKeysScriptsDependOn() throws IOException {
        CliRun r = run("simulate", "--plan", "config/plans/checkout-redesign.yaml", "--trials", "4000", "--data-trials", "20",
                "--effects", "0,0.005,0.008", "--format", "json");
        assertEquals(0, r.code(), r.err());
        JsonNode root = new ObjectMapper().readTree(r.out());
        for (String k : List.of("plan", "trials", "seed", "effects")) {
            assertTrue(root.has(k), "root key " + k);
        }
        assertEquals("checkout-redesign", root.get("plan").asText());
        assertEquals(4000, root.get("trials").asLong());
        assertEquals(3, root.get("effects").size());
        for (JsonNode e : root.get("effects")) {
            for (String k : List.of("effect", "efficacyProbability", "efficacyProbabilityStandardError",
                    "futilityProbability", "expectedUnitsPerArm", "stopLookProbabilities", "method",
                    "efficacyProbabilityExact")) {
                assertTrue(e.has(k), "effect key " + k + " in " + e);
            }
            assertEquals("monte-carlo", e.get("method").asText(), "the headline figures are the z-scale Monte Carlo");
            assertEquals(5, e.get("stopLookProbabilities").size(), "one probability per planned look");
            assertTrue(e.get("efficacyProbabilityStandardError").asDouble() > 0, "Monte Carlo figures carry an SE");
            assertTrue(e.has("dataLevel") && e.get("dataLevel").has("sampleRatio"), "data-level figures");
        }
    }

    @Test
    void sprtPlan_json_isDataLevelMonteCarloWithoutExactFigures() throws IOException {
        CliRun r = run("simulate", "--plan", "config/plans/gift-wrap-upsell.yaml", "--trials", "20", "--format", "json");
        assertEquals(0, r.code(), r.err());
        JsonNode e = new ObjectMapper().readTree(r.out()).get("effects").get(1);
        assertEquals(0.01, e.get("effect").asDouble(), 0, "default effects: 0 and the SPRT's minimum effect");
        assertEquals("monte-carlo", e.get("method").asText());
        assertFalse(e.has("efficacyProbabilityExact"), "no exact figure for an SPRT plan");
        assertTrue(e.has("guardrails"), "guardrail false alarms");
    }

    @ParameterizedTest
    @CsvSource(delimiter = '|', value = {
            "--trials|abc|--trials: must be an integer",
            "--trials|1|--trials: must be",
            "--effects|0,x|--effects: must be comma-separated numbers",
            "--effects|0.95|--effects: effect 0.95 puts the treatment rate",
            "--format|xml|--format: must be table or json",
            "--threads|0|--threads: must be in [1, 256]",
            "--traffic|no-such-file.yaml|--traffic: cannot read"})
    void badOption_printsOneLineNamingTheOptionAndRule_exitCode2(String option, String value, String message) {
        CliRun r = run("simulate", "--plan", "config/plans/checkout-redesign.yaml", option, value);
        assertEquals(2, r.code(), r.err());
        assertTrue(r.err().startsWith(message), r.err());
        assertEquals(1, r.err().strip().lines().count(), "one line: " + r.err());
        assertEquals("", r.out());
    }

    @Test
    void table_labelsEachFigureWithItsMethod() {
        CliRun r = run("simulate", "--plan", "config/plans/checkout-redesign.yaml", "--trials", "4000", "--data-trials", "0");
        assertEquals(0, r.code(), r.err());
        assertTrue(r.out().contains("[exact]") && r.out().contains("[MC z-scale]"), r.out());
        assertTrue(r.out().contains("P(efficacy) = type I error"), r.out());
    }

    @Test
    void report_isOneSelfContainedFile_withTheCharts(@TempDir Path dir) throws IOException {
        Path report = dir.resolve("report.html");
        CliRun r = run("simulate", "--plan", "config/plans/checkout-redesign.yaml", "--trials", "4000", "--data-trials", "20",
                "--traffic", "simulations/traffic/bookshop-checkout.yaml", "--report", report.toString());
        assertEquals(0, r.code(), r.err());
        String html = Files.readString(report);
        assertFalse(Pattern.compile("(src|href)\\s*=\\s*[\"']?\\s*(https?:)?//", Pattern.CASE_INSENSITIVE).matcher(html).find(),
                "no external src/href");
        assertFalse(html.contains("http"), "no address of anything outside the file");
        assertFalse(html.contains("<script"), "no scripts");
        assertFalse(html.contains("@import") || html.contains("url("), "no external CSS or fonts");
        long svgs = Pattern.compile("<svg ").matcher(html).results().count();
        // Boundaries, power curve, one stopping-look panel per effect (2), calendar.
        assertEquals(5, svgs, "charts");
        assertTrue(html.contains("stroke-dasharray"), "futility drawn dashed, not by colour alone");
        assertTrue(html.contains("Look calendar"));
    }

    @Test
    void report_sprtPlan_hasThePowerAndStoppingChartsButNoBoundaries(@TempDir Path dir) throws IOException {
        Path report = dir.resolve("gift.html");
        CliRun r = run("simulate", "--plan", "config/plans/gift-wrap-upsell.yaml", "--trials", "20", "--report",
                report.toString());
        assertEquals(0, r.code(), r.err());
        String html = Files.readString(report);
        assertFalse(html.contains("http"), "no address of anything outside the file");
        // Power curve and one stopping panel per effect (0 and 0.01); no boundaries, no calendar without traffic.
        assertEquals(3, Pattern.compile("<svg ").matcher(html).results().count(), "charts");
        assertTrue(html.contains("Power curve") && !html.contains("Boundaries and simulated paths"));
    }
}
