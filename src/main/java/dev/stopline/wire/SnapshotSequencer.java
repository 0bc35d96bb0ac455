package dev.stopline.wire;

import java.util.Map;

/**
 * Checks a parsed snapshot against the plan of its experiment and against the previous accepted
 * snapshot of the same experiment. Pure: the caller keeps the previous snapshot (per experiment, in
 * memory, in a database or while replaying a file) and passes it in.
 *
 * <p>Order of checks, first failure wins: {@code unknown-experiment} (no plan), {@code duplicate}
 * (same sequence as the previous one: a redelivery, acknowledge without a look),
 * {@code out-of-order} (lower sequence), then the shape against the plan ({@code unknown-arm},
 * {@code missing-arm}, {@code unknown-metric}, {@code missing-metric}), then
 * {@code decreasing-count} (units or any sum below the previous snapshot: counts are cumulative).
 * The decrease check allows a relative slack of {@value #DECREASE_SLACK} on sums, because a producer
 * that recomputes a floating-point sum in another order may differ in the last bits; units are
 * integers and get no slack.
 */
public final class SnapshotSequencer {
    /** Relative slack when comparing sums with the previous snapshot. */
    public static final double DECREASE_SLACK = 1e-9;

    private SnapshotSequencer() {
    }

    /**
     * Returns {@code next} if it may be used for a look, else the rejection.
     *
     * @param next     the freshly parsed snapshot
     * @param previous the last accepted snapshot of the same experiment, or null if none
     * @param plan     what the plan of {@code next.experiment()} expects, or null if no plan is loaded
     * @throws IllegalArgumentException if {@code previous} belongs to another experiment (a caller bug)
     */
    public static Outcome check(Snapshot next, Snapshot previous, PlanShape plan) {
        if (previous != null && !previous.experiment().equals(next.experiment())) {
            throw new IllegalArgumentException("previous snapshot is of experiment " + previous.experiment()
                    + ", not " + next.experiment());
        }
        if (plan == null) {
            return new Rejection(Reason.UNKNOWN_EXPERIMENT, "no stopping plan is loaded for experiment \""
                    + next.experiment() + "\"");
        }
        Rejection r = sequence(next, previous);
        if (r == null) {
            r = shape(next, plan);
        }
        if (r == null && previous != null) {
            r = decrease(next, previous);
        }
        return r == null ? next : r;
    }

    private static Rejection sequence(Snapshot next, Snapshot previous) {
        if (previous == null || next.sequence() > previous.sequence()) {
            return null;
        }
        if (next.sequence() == previous.sequence()) {
            return new Rejection(Reason.DUPLICATE, "sequence " + next.sequence() + " was already accepted"
                    + (next.arms().equals(previous.arms()) ? "" : " with different counts; the first one is kept"));
        }
        return new Rejection(Reason.OUT_OF_ORDER, "sequence " + next.sequence() + " is below the last accepted "
                + previous.sequence());
    }

    private static Rejection shape(Snapshot next, PlanShape plan) {
        for (String arm : next.arms().keySet()) {
            if (!plan.arms().contains(arm)) {
                return new Rejection(Reason.UNKNOWN_ARM, "/arms/" + arm + ": not an arm of the plan " + plan.arms());
            }
        }
        for (String arm : plan.arms()) {
            if (!next.arms().containsKey(arm)) {
                return new Rejection(Reason.MISSING_ARM, "/arms/" + arm + ": arm of the plan is missing");
            }
        }
        for (Map.Entry<String, ArmCounts> e : next.arms().entrySet()) {
            Rejection r = metrics(e.getKey(), e.getValue(), plan);
            if (r != null) {
                return r;
            }
        }
        return null;
    }

    private static Rejection metrics(String arm, ArmCounts counts, PlanShape plan) {
        for (String m : counts.metrics().keySet()) {
            if (!plan.metrics().contains(m)) {
                return new Rejection(Reason.UNKNOWN_METRIC, "/arms/" + arm + "/metrics/" + m
                        + ": not a metric of the plan " + plan.metrics());
            }
        }
        for (String m : plan.metrics()) {
            if (!counts.metrics().containsKey(m)) {
                return new Rejection(Reason.MISSING_METRIC, "/arms/" + arm + "/metrics/" + m
                        + ": metric of the plan is missing");
            }
        }
        return null;
    }

    private static Rejection decrease(Snapshot next, Snapshot previous) {
        for (Map.Entry<String, ArmCounts> e : next.arms().entrySet()) {
            ArmCounts before = previous.arms().get(e.getKey());
            if (before == null) {
                continue;
            }
            if (e.getValue().units() < before.units()) {
                return decreased("/arms/" + e.getKey() + "/units", e.getValue().units(), before.units(), previous);
            }
            for (Map.Entry<String, MetricSums> m : e.getValue().metrics().entrySet()) {
                MetricSums old = before.metrics().get(m.getKey());
                String field = old == null ? null : decreasedField(m.getValue(), old);
                if (field != null) {
                    String at = "/arms/" + e.getKey() + "/metrics/" + m.getKey() + "/" + field;
                    return decreased(at, value(m.getValue(), field), value(old, field), previous);
                }
            }
        }
        return null;
    }

    /** The first field of {@code now} below its value in {@code old}, or null (no text built on the good path). */
    private static String decreasedField(MetricSums now, MetricSums old) {
        if (below(now.sum(), old.sum())) {
            return "sum";
        }
        if (below(now.sumOfSquares(), old.sumOfSquares())) {
            return "sumOfSquares";
        }
        if (now.ratio() == null || old.ratio() == null) {
            return null;
        }
        RatioSums a = now.ratio();
        RatioSums b = old.ratio();
        if (below(a.denominatorSum(), b.denominatorSum())) {
            return "denominatorSum";
        }
        if (below(a.denominatorSumOfSquares(), b.denominatorSumOfSquares())) {
            return "denominatorSumOfSquares";
        }
        return below(a.sumOfProducts(), b.sumOfProducts()) ? "sumOfProducts" : null;
    }

    private static double value(MetricSums m, String field) {
        return switch (field) {
            case "sum" -> m.sum();
            case "sumOfSquares" -> m.sumOfSquares();
            case "denominatorSum" -> m.ratio().denominatorSum();
            case "denominatorSumOfSquares" -> m.ratio().denominatorSumOfSquares();
            default -> m.ratio().sumOfProducts();
        };
    }

    private static boolean below(double now, double before) {
        return now < before * (1 - DECREASE_SLACK);
    }

    private static Rejection decreased(String at, double now, double before, Snapshot previous) {
        return new Rejection(Reason.DECREASING_COUNT, at + ": " + fmt(now) + " is below " + fmt(before)
                + " in sequence " + previous.sequence() + "; counts are cumulative");
    }

    private static String fmt(double x) {
        return x == Math.rint(x) && Math.abs(x) < 1e15 ? Long.toString((long) x) : Double.toString(x);
    }
}
