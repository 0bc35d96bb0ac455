package dev.stopline.bench;

import dev.stopline.wire.ArmCounts;
import dev.stopline.wire.MetricSums;
import dev.stopline.wire.Snapshot;
import dev.stopline.wire.SnapshotWriter;
import java.time.Duration;
import java.time.Instant;
import java.util.LinkedHashMap;
import java.util.Locale;
import java.util.Map;
import java.util.SplittableRandom;

/**
 * The invented bookshop fleet the load benchmark feeds: experiment {@code i} has a plan and a
 * scenario chosen from {@code i} alone, and a stream of cumulative snapshots drawn from a random
 * generator seeded from {@code (seed, i)}, so any one experiment's stream can be drawn again on its own
 * (for the oracle) without replaying the others.
 *
 * <p>Plans ({@code i mod 6}): even {@code i} a 5-look two-sided O'Brien-Fleming-type group-sequential
 * plan, odd {@code i} a two-sided mixture SPRT, both on the 0/1 metric {@code orders} with
 * {@code maxUnitsPerArm} equal to the units an arm receives over the planned rounds; {@code i mod 3 = 0}
 * adds a guardrail on the 0/1 metric {@code returns} (harmful increase beyond 0.2 percentage points).
 *
 * <p>Scenarios ({@code (i / 6) mod 10}, so every plan kind meets every scenario): 0 a true lift of the
 * order rate from 10% to 10.6% from the start (efficacy crossings at some look); 1 a sample-ratio
 * mismatch from round {@code rounds / 2} on (46% of new units to treatment instead of 50%); 2 a return
 * rate rising from 2% to 4% in treatment from round {@code rounds / 3} on (a guardrail alert where the plan
 * has one); 3-9 no effect. Each round every arm pair receives 1,900-2,100 new units split by a binomial
 * draw (normal approximation), successes are binomial draws too, so the sample-ratio check sees honest
 * binomial noise.
 */
final class LoadStream {
    /** New units per round, both arms together: 1,900 to 2,100, uniform. */
    static final int UNITS_PER_ROUND = 2_000;
    static final double ORDER_RATE = 0.10;
    static final double LIFTED_ORDER_RATE = 0.106;
    static final double RETURN_RATE = 0.02;
    static final double HARMFUL_RETURN_RATE = 0.04;
    static final double MISMATCHED_SHARE = 0.46;
    private static final Instant START = Instant.parse("2027-03-01T00:00:00Z");

    enum Scenario { NO_EFFECT, LIFT, SAMPLE_RATIO, RETURNS_HARM }

    private LoadStream() {
    }

    static String id(int i) {
        return String.format(Locale.ROOT, "bookshop-%05d", i);
    }

    /** The experiment index of an id made by {@link #id}, or -1. */
    static int index(String id) {
        if (id == null || !id.startsWith("bookshop-")) {
            return -1;
        }
        try {
            return Integer.parseInt(id.substring("bookshop-".length()));
        } catch (NumberFormatException e) {
            return -1;
        }
    }

    static boolean groupSequential(int i) {
        return i % 2 == 0;
    }

    static boolean guarded(int i) {
        return i % 3 == 0;
    }

    static Scenario scenario(int i) {
        return switch ((i / 6) % 10) {
            case 0 -> Scenario.LIFT;
            case 1 -> Scenario.SAMPLE_RATIO;
            case 2 -> Scenario.RETURNS_HARM;
            default -> Scenario.NO_EFFECT;
        };
    }

    /** The plan of experiment {@code i}, sized so that its arms reach the maximum after {@code rounds} rounds. */
    static String plan(int i, int rounds) {
        long maxUnits = (long) UNITS_PER_ROUND / 2 * rounds;
        StringBuilder b = new StringBuilder()
                .append("experiment: ").append(id(i)).append('\n')
                .append("allocation: {control: 0.5, treatment: 0.5}\n")
                .append("control: control\n")
                .append("primary:\n")
                .append("  metric: orders\n")
                .append("  type: proportion\n");
        if (groupSequential(i)) {
            b.append("  method: group-sequential\n")
                    .append("  alpha: 0.05\n")
                    .append("  sides: 2\n")
                    .append("  spending: obrien-fleming\n")
                    .append("  looks: 5\n");
        } else {
            b.append("  method: mixture-sprt\n")
                    .append("  alpha: 0.05\n")
                    .append("  sides: 2\n")
                    .append("  mixtureSprt: {tau: 0.01}\n");
        }
        b.append("  maxUnitsPerArm: ").append(maxUnits).append('\n')
                .append("  baselineRate: ").append(ORDER_RATE).append('\n');
        if (guarded(i)) {
            b.append("guardrails:\n")
                    .append("  - {metric: returns, type: proportion, harmful: increase, margin: 0.002, relative: false,"
                            + " alpha: 0.01}\n");
        }
        return b.append("sampleRatio: {alpha: 0.001}\n").toString();
    }

    /** A fresh stream of experiment {@code i}. */
    static Feed feed(long seed, int i, int rounds) {
        return new Feed(seed, i, rounds);
    }

    /** The cumulative snapshots of one experiment, one per call of {@link #next}, sequences from 1. */
    static final class Feed {
        private final int index;
        private final Scenario scenario;
        private final boolean guarded;
        private final int mismatchFrom;
        private final int harmFrom;
        private final SplittableRandom random;
        private long sequence;
        private long controlUnits;
        private long treatmentUnits;
        private long controlOrders;
        private long treatmentOrders;
        private long controlReturns;
        private long treatmentReturns;

        private Feed(long seed, int index, int rounds) {
            this.index = index;
            this.scenario = scenario(index);
            this.guarded = guarded(index);
            this.mismatchFrom = Math.max(2, rounds / 2);
            this.harmFrom = Math.max(2, rounds / 3);
            // one generator per experiment, its seed spread by the golden-ratio increment (SplittableRandom's own)
            this.random = new SplittableRandom(seed + 0x9E3779B97F4A7C15L * (index + 1L));
        }

        long sequence() {
            return sequence;
        }

        /** The next snapshot in the wire format. */
        String next() {
            sequence++;
            int n = UNITS_PER_ROUND - 100 + random.nextInt(201);
            double share = scenario == Scenario.SAMPLE_RATIO && sequence >= mismatchFrom ? MISMATCHED_SHARE : 0.5;
            long t = binomial(n, share);
            long c = n - t;
            controlUnits += c;
            treatmentUnits += t;
            controlOrders += binomial(c, ORDER_RATE);
            treatmentOrders += binomial(t, scenario == Scenario.LIFT ? LIFTED_ORDER_RATE : ORDER_RATE);
            controlReturns += binomial(c, RETURN_RATE);
            treatmentReturns += binomial(t, scenario == Scenario.RETURNS_HARM && sequence >= harmFrom
                    ? HARMFUL_RETURN_RATE : RETURN_RATE);
            Map<String, ArmCounts> arms = new LinkedHashMap<>();
            arms.put("control", arm(controlUnits, controlOrders, controlReturns));
            arms.put("treatment", arm(treatmentUnits, treatmentOrders, treatmentReturns));
            return SnapshotWriter.toJson(new Snapshot(id(index), sequence,
                    START.plus(Duration.ofMinutes(sequence)), arms));
        }

        private ArmCounts arm(long units, long orders, long returns) {
            Map<String, MetricSums> metrics = new LinkedHashMap<>();
            metrics.put("orders", MetricSums.of(orders, orders));
            if (guarded) {
                metrics.put("returns", MetricSums.of(returns, returns));
            }
            return new ArmCounts(units, metrics);
        }

        /** A binomial(n, p) draw by the normal approximation, rounded and clamped to [0, n]. */
        private long binomial(long n, double p) {
            double x = n * p + Math.sqrt(n * p * (1 - p)) * random.nextGaussian();
            return Math.max(0, Math.min(n, Math.round(x)));
        }
    }
}
