package dev.stopline.simulations;

import dev.stopline.demo.BookshopScenario;
import dev.stopline.wire.ArmCounts;
import dev.stopline.wire.MetricSums;
import dev.stopline.wire.Snapshot;
import dev.stopline.wire.SnapshotWriter;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * Writes the recorded scenario streams of {@code simulations/streams}: the invented bookshop of
 * {@link BookshopScenario}, seeded, one file per experiment, plus one stream with bad lines mixed in.
 * Deterministic: the same code writes the same bytes, which {@code RecordStreamsTest} checks against the
 * committed files.
 *
 * <p>Regenerate (from the project root, after {@code ./mvnw -o -q test-compile}; only the project's own
 * classes are needed):
 * <pre>{@code
 * java -cp target/classes:target/test-classes dev.stopline.simulations.RecordStreams simulations/streams
 * }</pre>
 *
 * <p>The bad-lines stream is the first {@value #BAD_LINES_HOURS} hours of {@code checkout-redesign}
 * with these lines inserted (1-based line numbers of the written file; the expected reason of each is
 * stated in {@code expected.yaml}):
 * <pre>
 *  6  malformed-json      the start of snapshot 6, cut off mid-object
 *  8  duplicate           snapshot 6 again (a redelivery)
 *  9  out-of-order        snapshot 4 again, after 6 was accepted
 * 10  (blank line)        skipped, still counted in line numbers
 * 12  decreasing-count    snapshot 8 with the control's order count one below snapshot 7's
 * 14  unknown-arm         snapshot 9 with a third arm "treatment-b"
 * 16  unknown-experiment  snapshot 9 of recommendations-v2, which the checkout plan does not know
 * 17  schema              snapshot 10 without its arms
 * </pre>
 * The good lines are unchanged, so replaying this stream must give the same looks and alerts as
 * replaying the first {@value #BAD_LINES_HOURS} hours of the clean stream.
 */
public final class RecordStreams {
    /** The demo's seed, so the recorded streams are the demo's data. */
    public static final long SEED = 20270301L;
    /** Start of the scenario: the first snapshot is one hour later. */
    public static final Instant START = Instant.parse("2027-03-01T00:00:00Z");
    /** Simulated hours per clean stream: the demo's default. */
    public static final int HOURS = 60;
    /** Hours of checkout-redesign in the bad-lines stream. */
    public static final int BAD_LINES_HOURS = 24;
    /** Name of the bad-lines stream. */
    public static final String BAD_LINES = "checkout-redesign-bad-lines.jsonl";

    private RecordStreams() {
    }

    /** File name to content, in a fixed order. */
    public static Map<String, String> streams() {
        BookshopScenario scenario = BookshopScenario.seeded(SEED, START);
        Map<String, List<Snapshot>> byExperiment = new LinkedHashMap<>();
        for (String id : scenario.experimentIds()) {
            byExperiment.put(id, new ArrayList<>());
        }
        for (int h = 0; h < HOURS; h++) {
            for (Snapshot s : scenario.tick()) {
                byExperiment.get(s.experiment()).add(s);
            }
        }
        Map<String, String> files = new LinkedHashMap<>();
        byExperiment.forEach((id, snaps) -> files.put(id + ".jsonl", lines(snaps)));
        files.put(BAD_LINES, badLines(byExperiment.get("checkout-redesign"), byExperiment.get("recommendations-v2")));
        return files;
    }

    private static String badLines(List<Snapshot> checkout, List<Snapshot> other) {
        List<String> out = new ArrayList<>();
        for (int seq = 1; seq <= 5; seq++) {
            out.add(json(checkout, seq));                                              // lines 1-5
        }
        out.add(json(checkout, 6).substring(0, json(checkout, 6).length() / 2));      // line 6: cut off
        out.add(json(checkout, 6));                                                    // line 7
        out.add(json(checkout, 6));                                                    // line 8: redelivery
        out.add(json(checkout, 4));                                                    // line 9: sequence 4 again
        out.add("");                                                                   // line 10: blank
        out.add(json(checkout, 7));                                                    // line 11
        double ordersBefore = checkout.get(6).arms().get("control").metrics().get("orders").sum();
        out.add(SnapshotWriter.toJson(withControlOrders(checkout.get(7), ordersBefore - 1)));  // line 12
        out.add(json(checkout, 8));                                                    // line 13
        out.add(SnapshotWriter.toJson(withExtraArm(checkout.get(8), "treatment-b")));  // line 14
        out.add(json(checkout, 9));                                                    // line 15
        out.add(SnapshotWriter.toJson(other.get(8)));                                  // line 16
        out.add("{\"experiment\":\"checkout-redesign\",\"sequence\":10,\"observedAt\":\""
                + checkout.get(9).observedAt() + "\"}");                               // line 17: no arms
        for (int seq = 10; seq <= BAD_LINES_HOURS; seq++) {
            out.add(json(checkout, seq));                                              // lines 18-32
        }
        return String.join("\n", out) + "\n";
    }

    private static String json(List<Snapshot> snapshots, int sequence) {
        return SnapshotWriter.toJson(snapshots.get(sequence - 1));
    }

    /** The snapshot with the control arm's order count (sum and sum of squares of a 0/1 metric) replaced. */
    private static Snapshot withControlOrders(Snapshot s, double orders) {
        Map<String, ArmCounts> arms = new LinkedHashMap<>(s.arms());
        ArmCounts c = arms.get("control");
        Map<String, MetricSums> metrics = new LinkedHashMap<>(c.metrics());
        metrics.put("orders", MetricSums.of(orders, orders));
        arms.put("control", new ArmCounts(c.units(), metrics));
        return new Snapshot(s.experiment(), s.sequence(), s.observedAt(), arms);
    }

    private static Snapshot withExtraArm(Snapshot s, String arm) {
        Map<String, ArmCounts> arms = new LinkedHashMap<>(s.arms());
        arms.put(arm, s.arms().get("treatment"));
        return new Snapshot(s.experiment(), s.sequence(), s.observedAt(), arms);
    }

    private static String lines(List<Snapshot> snapshots) {
        StringBuilder b = new StringBuilder();
        for (Snapshot s : snapshots) {
            b.append(SnapshotWriter.toJson(s)).append('\n');
        }
        return b.toString();
    }

    /** Writes every stream into the directory given as the only argument. */
    public static void main(String[] args) throws IOException {
        if (args.length != 1) {
            throw new IllegalArgumentException("usage: RecordStreams DIRECTORY (e.g. simulations/streams)");
        }
        Path dir = Files.createDirectories(Path.of(args[0]));
        for (Map.Entry<String, String> e : streams().entrySet()) {
            Files.writeString(dir.resolve(e.getKey()), e.getValue(), StandardCharsets.UTF_8);
        }
    }
}
