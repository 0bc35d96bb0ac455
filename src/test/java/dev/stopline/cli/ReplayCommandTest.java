package dev.stopline.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.stopline.monitor.Alert;
import dev.stopline.monitor.Evaluation;
import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.monitor.MonitorState;
import dev.stopline.plan.PlanParser;
import dev.stopline.wire.Snapshot;
import dev.stopline.wire.SnapshotParser;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Iterator;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The {@code replay} command as a user and a script see it: options, exit codes, the JSON contract,
 * line numbering, and that it runs the daemon's evaluator (checked against calling the monitor
 * directly, snapshot by snapshot).
 */
class ReplayCommandTest {
    static final Path CHECKOUT_PLAN = Path.of("config/plans/checkout-redesign.yaml");
    static final Path CHECKOUT_STREAM = Path.of("simulations/streams/checkout-redesign.jsonl");
    private static final ObjectMapper JSON = new ObjectMapper();

    @TempDir
    Path dir;

    /** Runs {@code stopline ARGS} in-process through the jar's command tree. */
    static CliRun run(String... args) {
        return CliRun.run(args);
    }

    @Test
    void missingPlanOption_isAUsageError() {
        CliRun r = run("replay", "--counts", CHECKOUT_STREAM.toString());
        assertEquals(2, r.code(), "picocli's exit code for a usage error");
        assertTrue(r.err().startsWith("Missing required option: '--plan=PLAN.yaml'"), r.err());
    }

    @Test
    void unknownFormat_isAUsageErrorNamingTheChoices() {
        CliRun r = run("replay", "--plan", CHECKOUT_PLAN.toString(), "--counts", CHECKOUT_STREAM.toString(), "--format", "xml");
        assertEquals(2, r.code());
        assertTrue(r.err().startsWith("Invalid value for option '--format': expected table or json, got 'xml'"), r.err());
    }

    @Test
    void unreadableCountsFile_exitsWithTwoAndOneLine() {
        Path missing = dir.resolve("missing.jsonl");
        CliRun r = run("replay", "--plan", CHECKOUT_PLAN.toString(), "--counts", missing.toString());
        assertEquals(2, r.code());
        assertEquals("replay: cannot read counts " + missing + ": NoSuchFile " + missing, r.err().strip());
        assertEquals("", r.out());
    }

    @Test
    void invalidPlan_exitsWithTwoAndOneLineListingTheProblems() throws IOException {
        Path plan = Files.writeString(dir.resolve("plan.yaml"), "experiment: checkout-redesign\nprimary: 3\n");
        CliRun r = run("replay", "--plan", plan.toString(), "--counts", CHECKOUT_STREAM.toString());
        assertEquals(2, r.code());
        assertEquals(1, r.err().strip().lines().count(), r.err());
        assertTrue(r.err().startsWith("replay: plan " + plan + " is not valid: "), r.err());
        assertTrue(r.err().contains("primary: must be a mapping"), r.err());
    }

    @Test
    void json_hasTheDocumentedFieldsInTheDocumentedOrder() {
        CliRun r = run("replay", "--plan", CHECKOUT_PLAN.toString(), "--counts", CHECKOUT_STREAM.toString(), "--format", "json");
        assertEquals(0, r.code(), r.err());
        JsonNode root = r.json();
        assertEquals(List.of("experiment", "looks", "sampleRatio", "alerts", "rejected", "duplicates", "lines", "snapshots"),
                names(root));
        assertEquals("checkout-redesign", root.get("experiment").asText());
        List<String> lookFields = List.of("sequence", "look", "metric", "informationFraction", "estimate", "standardError",
                "z", "efficacyZ", "futilityZ", "cumulativeAlphaSpent", "alwaysValidPValue", "decision");
        for (JsonNode look : root.get("looks")) {
            assertEquals(lookFields, names(look).subList(0, lookFields.size()), look.toString());
        }
        JsonNode primary = first(root.get("looks"), "role", "primary");
        assertTrue(primary.get("efficacyZ").isNumber() && primary.get("cumulativeAlphaSpent").isNumber(), primary.toString());
        assertTrue(primary.get("alwaysValidPValue").isNull(), "a group-sequential look has no always-valid p");
        JsonNode guardrail = first(root.get("looks"), "role", "guardrail");
        assertTrue(guardrail.get("efficacyZ").isNull() && guardrail.get("look").isNull(), guardrail.toString());
        assertTrue(guardrail.get("alwaysValidPValue").isNumber(), guardrail.toString());
        assertEquals(List.of("sequence", "pValue", "mismatch"), names(root.get("sampleRatio").get(0)).subList(0, 3));
        assertEquals(60, root.get("sampleRatio").size(), "one sample-ratio check per snapshot");
        assertEquals(List.of("kind", "sequence", "look"), names(root.get("alerts").get(0)).subList(0, 3));
    }

    @Test
    void decisions_useTheWireNames() {
        JsonNode root = run("replay", "--plan", CHECKOUT_PLAN.toString(), "--counts", CHECKOUT_STREAM.toString(),
                "--format", "json").json();
        for (JsonNode look : root.get("looks")) {
            String d = look.get("decision").asText();
            assertTrue(List.of("continue", "efficacy", "futility", "final-no-difference", "guardrail-harm").contains(d), d);
        }
    }

    @Test
    void blankLinesAreSkipped_butCounted_andCrLfLinesAreRead() throws IOException {
        List<String> lines = Files.readAllLines(CHECKOUT_STREAM).subList(0, 3);
        Path counts = Files.writeString(dir.resolve("c.jsonl"),
                lines.get(0) + "\r\n\r\n   \n" + lines.get(1) + "\r\n" + "{oops\n" + lines.get(2));
        JsonNode root = run("replay", "--plan", CHECKOUT_PLAN.toString(), "--counts", counts.toString(), "--format", "json")
                .json();
        assertEquals(3, root.get("snapshots").asInt());
        assertEquals(6, root.get("lines").asInt(), "the last line has no newline and still counts");
        assertEquals(1, root.get("rejected").size());
        assertEquals(5, root.get("rejected").get(0).get("line").asInt(), "blank lines 2 and 3 count in the numbering");
        assertEquals("malformed-json", root.get("rejected").get(0).get("reason").asText());
    }

    @Test
    void lineOverThePayloadLimit_isTooLarge_andTheNextLineIsStillRead() throws IOException {
        List<String> lines = Files.readAllLines(CHECKOUT_STREAM).subList(0, 2);
        String huge = "{\"experiment\":\"" + "x".repeat(SnapshotParser.DEFAULT_MAX_BYTES + 10) + "\"}";
        Path counts = Files.writeString(dir.resolve("c.jsonl"), lines.get(0) + "\n" + huge + "\n" + lines.get(1) + "\n");
        JsonNode root = run("replay", "--plan", CHECKOUT_PLAN.toString(), "--counts", counts.toString(), "--format", "json")
                .json();
        assertEquals(2, root.get("snapshots").asInt());
        assertEquals(2, root.get("rejected").get(0).get("line").asInt());
        assertEquals("too-large", root.get("rejected").get(0).get("reason").asText());
    }

    @Test
    void snapshotOfAnotherExperiment_isRejectedAsUnknownExperiment() throws IOException {
        String other = Files.readAllLines(Path.of("simulations/streams/gift-wrap-upsell.jsonl")).get(0);
        Path counts = Files.writeString(dir.resolve("c.jsonl"), other + "\n");
        JsonNode root = run("replay", "--plan", CHECKOUT_PLAN.toString(), "--counts", counts.toString(), "--format", "json")
                .json();
        assertEquals("unknown-experiment", root.get("rejected").get(0).get("reason").asText());
        assertEquals(0, root.get("snapshots").asInt());
    }

    @Test
    void replay_givesTheSameLooksAndAlertsAsTheMonitorCalledSnapshotBySnapshot() throws IOException {
        ExperimentMonitor monitor = ExperimentMonitor.of(PlanParser.parse(CHECKOUT_PLAN), ReplayCommand.PLAN_VERSION);
        MonitorState state = monitor.initialState();
        List<String> expectedAlerts = new ArrayList<>();
        int expectedLooks = 0;
        for (String line : Files.readAllLines(CHECKOUT_STREAM)) {
            Snapshot s = (Snapshot) SnapshotParser.withDefaults().parse(line.getBytes(StandardCharsets.UTF_8));
            Evaluation e = monitor.evaluate(state, s);
            state = e.state();
            expectedLooks += e.looks().size();
            e.alerts().stream().map(Alert::id).forEach(expectedAlerts::add);
        }
        JsonNode root = run("replay", "--plan", CHECKOUT_PLAN.toString(), "--counts", CHECKOUT_STREAM.toString(),
                "--format", "json").json();
        assertEquals(expectedLooks, root.get("looks").size());
        List<String> ids = new ArrayList<>();
        root.get("alerts").forEach(a -> ids.add(a.get("id").asText()));
        assertEquals(expectedAlerts, ids);
        assertEquals(state.cumulativeAlphaSpent(), lastPrimary(root).get("cumulativeAlphaSpent").asDouble(), 0.0,
                "the ledger's last entry is the state's alpha spent, the same double");
    }

    @Test
    void table_showsLooksAlertsWithTheirSummary_andRejectedLines() {
        CliRun r = run("replay", "--plan", CHECKOUT_PLAN.toString(), "--counts",
                "simulations/streams/checkout-redesign-bad-lines.jsonl");
        assertEquals(0, r.code(), "rejected lines do not make the replay fail");
        String t = r.out();
        assertTrue(t.startsWith("Replay of checkout-redesign: primary orders by group-sequential; 32 lines, "
                + "24 snapshots evaluated, 6 rejected, 1 duplicate"), t);
        assertTrue(t.contains("efficacy     checkout-redesign: efficacy boundary crossed at look 2 of 5"), t);
        assertTrue(t.contains("line 9     out-of-order       sequence 4 is below the last accepted 6"), t);
        assertTrue(t.contains("line 8     duplicate"), t);
        assertTrue(t.contains("Alpha ledger (orders, alpha 0.05)"), t);
        assertTrue(t.contains("look 2 of 5 at information 0.4222: spent 0.001122, cumulative 0.001123 "
                + "(efficacy: no further looks)"), t);
        assertFalse(t.contains("Infinity") || t.contains("NaN"), t);
    }

    private static JsonNode lastPrimary(JsonNode root) {
        JsonNode last = null;
        for (JsonNode l : root.get("looks")) {
            if (l.get("role").asText().equals("primary")) {
                last = l;
            }
        }
        return last;
    }

    static JsonNode first(JsonNode array, String field, String value) {
        for (JsonNode n : array) {
            if (n.get(field).asText().equals(value)) {
                return n;
            }
        }
        throw new AssertionError("no element with " + field + " = " + value + " in " + array);
    }

    static List<String> names(JsonNode object) {
        List<String> names = new ArrayList<>();
        for (Iterator<String> it = object.fieldNames(); it.hasNext(); ) {
            names.add(it.next());
        }
        return names;
    }
}
