package dev.stopline.simulations;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.dataformat.yaml.YAMLMapper;
import dev.stopline.cli.Main;
import dev.stopline.plan.PlanParser;
import java.io.IOException;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.stream.Stream;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.Arguments;
import org.junit.jupiter.params.provider.MethodSource;
import picocli.CommandLine;

/**
 * Replays every recorded stream of {@code simulations/streams} through the {@code replay} command
 * (in-process, the jar's command tree) and compares the outcome with {@code expected.yaml}.
 */
class RecordedStreamsTest {
    static final Path EXPECTED = Path.of("simulations/streams/expected.yaml");
    private static final ObjectMapper JSON = new ObjectMapper();

    static Stream<Arguments> streams() throws IOException {
        JsonNode root = new YAMLMapper().readTree(EXPECTED.toFile());
        List<Arguments> out = new ArrayList<>();
        root.get("streams").forEach(s -> out.add(Arguments.of(s.get("counts").asText(), s)));
        return out.stream();
    }

    static JsonNode replay(String plan, String counts) {
        CommandLine cli = Main.commandLine();
        StringWriter out = new StringWriter();
        StringWriter err = new StringWriter();
        cli.setOut(new PrintWriter(out));
        cli.setErr(new PrintWriter(err));
        int code = cli.execute("replay", "--plan", plan, "--counts", counts, "--format", "json");
        assertEquals(0, code, "exit code; stderr: " + err);
        try {
            return JSON.readTree(out.toString());
        } catch (IOException e) {
            throw new AssertionError("replay output is not JSON: " + out, e);
        }
    }

    @ParameterizedTest(name = "{0}")
    @MethodSource("streams")
    void replay_givesTheExpectedAlertsRejectionsAndDuplicates(String counts, JsonNode expected) {
        JsonNode r = replay(expected.get("plan").asText(), counts);
        assertEquals(expected.get("lines").asLong(), r.get("lines").asLong(), "lines read");
        assertEquals(expected.get("snapshots").asLong(), r.get("snapshots").asLong(), "snapshots evaluated");
        assertEquals(alerts(expected.get("alerts")), alerts(r.get("alerts")), "alerts: kind@sequence/look");
        for (int i = 0; i < expected.get("alerts").size(); i++) {
            JsonNode metric = expected.get("alerts").get(i).get("metric");
            if (metric != null) {
                assertEquals(metric.asText(), r.get("alerts").get(i).get("metric").asText(), "metric of alert " + i);
            }
        }
        assertEquals(lines(expected.get("rejected"), true), lines(r.get("rejected"), true), "rejected lines");
        assertEquals(lines(expected.get("duplicates"), false), lines(r.get("duplicates"), false), "duplicate lines");
        r.get("duplicates").forEach(d -> assertEquals("duplicate", d.get("reason").asText()));
    }

    @ParameterizedTest(name = "{0}")
    @MethodSource("streams")
    void everyGroupSequentialDecision_agreesWithTheZAndBoundariesPrinted(String counts, JsonNode expected)
            throws IOException {
        int sides = PlanParser.parse(Path.of(expected.get("plan").asText())).primary().sides();
        JsonNode r = replay(expected.get("plan").asText(), counts);
        for (JsonNode l : r.get("looks")) {
            if (!l.get("method").asText().equals("group-sequential")) {
                continue;
            }
            double z = sides == 2 ? Math.abs(l.get("z").asDouble()) : l.get("z").asDouble();
            boolean crossed = !l.get("efficacyZ").isNull() && z >= l.get("efficacyZ").asDouble();
            boolean futile = !crossed && !l.get("futilityZ").isNull() && z <= l.get("futilityZ").asDouble();
            String decision = l.get("decision").asText();
            assertEquals(crossed, decision.equals("efficacy"), "efficacy iff z beyond the bound: " + l);
            assertEquals(futile, decision.equals("futility"), "futility iff z inside the inner region: " + l);
        }
    }

    @ParameterizedTest(name = "{0}")
    @MethodSource("streams")
    void badLines_leaveTheLooksOfTheGoodLinesUnchanged(String counts, JsonNode expected) {
        JsonNode same = expected.get("sameLooksAs");
        if (same == null) {
            return;
        }
        String plan = expected.get("plan").asText();
        List<JsonNode> clean = new ArrayList<>();
        replay(plan, same.get("counts").asText()).get("looks").forEach(l -> {
            if (l.get("sequence").asLong() <= same.get("upToSequence").asLong()) {
                clean.add(l);
            }
        });
        List<JsonNode> mixed = new ArrayList<>();
        replay(plan, counts).get("looks").forEach(mixed::add);
        assertEquals(clean, mixed, "looks of the stream with bad lines against the clean stream's");
    }

    private static List<String> alerts(JsonNode array) {
        List<String> out = new ArrayList<>();
        for (JsonNode a : array) {
            out.add(String.format(Locale.ROOT, "%s@%d/%s", a.get("kind").asText(), a.get("sequence").asLong(),
                    a.get("look").isNull() ? "-" : a.get("look").asText()));
        }
        return out;
    }

    private static List<String> lines(JsonNode array, boolean withReason) {
        List<String> out = new ArrayList<>();
        for (JsonNode n : array) {
            out.add(n.get("line").asText() + (withReason ? " " + n.get("reason").asText() : ""));
        }
        return out;
    }
}
