package dev.stopline.testing;

import dev.stopline.stats.estimate.ArmStatistics;
import dev.stopline.stats.estimate.Comparison;
import dev.stopline.stats.estimate.MetricType;
import dev.stopline.wire.ArmCounts;
import dev.stopline.wire.MetricSums;
import dev.stopline.wire.Outcome;
import dev.stopline.wire.PlanShape;
import dev.stopline.wire.Rejection;
import dev.stopline.wire.Snapshot;
import dev.stopline.wire.SnapshotSequencer;
import dev.stopline.wire.SnapshotWriter;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Set;

/**
 * Builds snapshot streams with a chosen z statistic at each snapshot, for end-to-end tests of the
 * evaluator (replay here, the daemon over Kafka elsewhere): a test can put z just below a boundary at
 * one look and just above it at the next and check that the stop comes exactly where the boundary says.
 *
 * <p>Construction, for one metric of type {@code mean} and two arms of equal size n: the control arm's
 * units have mean mu and standard deviation sigma, so its sums are {@code sum = n mu} and
 * {@code sumOfSquares = n (mu^2 + sigma^2)}; the treatment arm is the control arm shifted by d
 * ({@code sum + n d} and {@code sumOfSquares + 2 d sum + n d^2}), which leaves its sample variance equal
 * to the control's. z is then {@code d / se} with se not depending on d, so d is found from the target z
 * in one step and refined once with the z the core itself computes ({@link Comparison}, the code the
 * evaluator calls), which removes the floating-point error of the first step. The z actually reached is
 * returned so a test can state the margin it relies on.
 *
 * <p>Every snapshot is checked with {@link SnapshotSequencer} against the previous one, so a builder
 * mistake (a count going down) fails here with a clear message instead of as a rejected line later.
 */
public final class Streams {
    private Streams() {
    }

    /** A stream of one mean metric in arms {@code control} and {@code treatment}. */
    public static MeanStream mean(String experiment, String metric, Instant start) {
        return new MeanStream(experiment, metric, start);
    }

    /** The wire form of snapshots, one JSON object per line, each line ending in a newline. */
    public static String jsonl(List<Snapshot> snapshots) {
        StringBuilder b = new StringBuilder();
        for (Snapshot s : snapshots) {
            b.append(SnapshotWriter.toJson(s)).append('\n');
        }
        return b.toString();
    }

    /** The z statistic the evaluator computes for a mean metric of a snapshot (treatment minus control). */
    public static double zOf(Snapshot s, String metric, String control, String treatment) {
        return comparison(s.arms().get(control), s.arms().get(treatment), metric).z();
    }

    private static Comparison comparison(ArmCounts c, ArmCounts t, String metric) {
        MetricSums mc = c.metrics().get(metric);
        MetricSums mt = t.metrics().get(metric);
        return Comparison.of(MetricType.MEAN, ArmStatistics.of(c.units(), mc.sum(), mc.sumOfSquares()),
                ArmStatistics.of(t.units(), mt.sum(), mt.sumOfSquares()), Comparison.DEFAULT_CONFIDENCE_LEVEL);
    }

    /** Builder of a two-arm mean-metric stream; sequence numbers count from 1, one snapshot per step. */
    public static final class MeanStream {
        public static final String CONTROL = "control";
        public static final String TREATMENT = "treatment";

        private final String experiment;
        private final String metric;
        private final Instant start;
        private double unitMean = 40.0;
        private double unitSd = 12.0;
        private Duration step = Duration.ofHours(1);
        private final List<Snapshot> snapshots = new ArrayList<>();
        private final List<Double> zs = new ArrayList<>();

        private MeanStream(String experiment, String metric, Instant start) {
            this.experiment = experiment;
            this.metric = metric;
            this.start = start;
        }

        /** Per-unit mean and standard deviation of the control arm (defaults 40 and 12: an order value in EUR, invented). */
        public MeanStream withUnits(double mean, double sd) {
            if (!(mean > 0 && sd > 0)) {
                throw new IllegalArgumentException("unit mean " + mean + " and sd " + sd + " must be > 0");
            }
            this.unitMean = mean;
            this.unitSd = sd;
            return this;
        }

        /** Time between snapshots (default one hour). */
        public MeanStream withStep(Duration step) {
            this.step = step;
            return this;
        }

        /**
         * Appends the next snapshot: {@code unitsPerArm} units in each arm and a treatment shift that
         * makes the evaluator's z equal {@code z} (to within rounding; see {@link #z(int)}).
         */
        public MeanStream snapshot(long unitsPerArm, double z) {
            if (unitsPerArm < 2) {
                throw new IllegalArgumentException("units per arm " + unitsPerArm + " must be >= 2 for a variance");
            }
            double n = unitsPerArm;
            double sum = n * unitMean;
            double sumSq = n * (unitMean * unitMean + unitSd * unitSd);
            ArmCounts control = arm(unitsPerArm, sum, sumSq);
            double se = comparison(control, control, metric).standardError();
            double d = z * se;
            Snapshot s = build(control, unitsPerArm, sum, sumSq, d);
            double reached = zOf(s, metric, CONTROL, TREATMENT);
            if (reached != 0 && d != 0) {
                d *= z / reached;                      // z is linear in d: one correction removes the rounding
                s = build(control, unitsPerArm, sum, sumSq, d);
                reached = zOf(s, metric, CONTROL, TREATMENT);
            }
            check(s);
            snapshots.add(s);
            zs.add(reached);
            return this;
        }

        private Snapshot build(ArmCounts control, long units, double sum, double sumSq, double d) {
            ArmCounts treatment = arm(units, sum + units * d, sumSq + 2 * d * sum + units * d * d);
            Map<String, ArmCounts> arms = new LinkedHashMap<>();
            arms.put(CONTROL, control);
            arms.put(TREATMENT, treatment);
            long sequence = snapshots.size() + 1;
            return new Snapshot(experiment, sequence, start.plus(step.multipliedBy(sequence)), arms);
        }

        private ArmCounts arm(long units, double sum, double sumSq) {
            return new ArmCounts(units, Map.of(metric, MetricSums.of(sum, sumSq)));
        }

        private void check(Snapshot s) {
            Snapshot previous = snapshots.isEmpty() ? null : snapshots.get(snapshots.size() - 1);
            Outcome o = SnapshotSequencer.check(s, previous, new PlanShape(Set.of(CONTROL, TREATMENT), Set.of(metric)));
            if (o instanceof Rejection r) {
                throw new IllegalStateException("snapshot " + s.sequence() + " would be rejected: " + r
                        + " (grow the units faster or shift less)");
            }
        }

        /** The snapshots built so far. */
        public List<Snapshot> snapshots() {
            return List.copyOf(snapshots);
        }

        /** The z the evaluator computes at the i-th snapshot (0-based). */
        public double z(int i) {
            return zs.get(i);
        }

        /** The stream in the wire format, one line per snapshot. */
        public String jsonl() {
            return Streams.jsonl(snapshots);
        }
    }
}
