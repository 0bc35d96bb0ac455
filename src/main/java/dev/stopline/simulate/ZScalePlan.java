package dev.stopline.simulate;

import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.plan.Method;
import dev.stopline.plan.MetricType;
import dev.stopline.plan.Plan;
import dev.stopline.plan.Primary;
import dev.stopline.stats.StatsException;
import dev.stopline.stats.groupseq.BoundarySet;
import dev.stopline.stats.groupseq.LookBoundary;
import dev.stopline.stats.groupseq.SampleSize;
import java.util.List;
import java.util.Map;

/**
 * A group-sequential primary on the Z scale, as the evaluator will run it at its planned looks: the
 * information fractions t_k, the planned efficacy bounds b_k and futility bounds a_k (NaN: none), the
 * sides, and the units per arm at each look, {@code t_k * maxUnitsPerArm} rounded up.
 *
 * <p>Effects are absolute differences on the metric's scale; the drift at full information is
 * {@code theta = effect / sd(difference at the maximum size)} (Jennison &amp; Turnbull 2000, sec. 3.1:
 * Z_k ~ N(theta sqrt t_k, 1)), with {@code sd^2 = p_c (1 - p_c) / n_c + p_t (1 - p_t) / n_t} for a
 * proportion ({@code p_t = p_c + effect}) and {@code sd^2 = sigma^2 (1 / n_c + 1 / n_t)} for a mean.
 */
public final class ZScalePlan {
    private final double[] timing;
    private final double[] efficacy;
    private final double[] futility;
    private final int sides;
    private final long[] unitsAtLook;
    private final Primary primary;
    private final double controlMax;
    private final double treatmentMax;

    private ZScalePlan(double[] timing, double[] efficacy, double[] futility, int sides, long[] unitsAtLook,
                       Primary primary, double controlMax, double treatmentMax) {
        this.timing = timing;
        this.efficacy = efficacy;
        this.futility = futility;
        this.sides = sides;
        this.unitsAtLook = unitsAtLook;
        this.primary = primary;
        this.controlMax = controlMax;
        this.treatmentMax = treatmentMax;
    }

    /** The Z-scale view of a monitor whose primary is group-sequential. */
    public static ZScalePlan of(ExperimentMonitor monitor) {
        Plan plan = monitor.plan();
        Primary p = plan.primary();
        if (p.method() != Method.GROUP_SEQUENTIAL) {
            throw new StatsException("the Z-scale view needs a group-sequential primary, got %s", p.method().key());
        }
        BoundarySet set = monitor.plannedBoundaries();
        List<LookBoundary> looks = set.looks();
        int k = looks.size();
        double[] t = new double[k];
        double[] b = new double[k];
        double[] a = new double[k];
        long[] n = new long[k];
        long max = monitor.sizing().maxUnitsPerArm();
        for (int i = 0; i < k; i++) {
            LookBoundary lb = looks.get(i);
            t[i] = lb.informationFraction();
            b[i] = lb.efficacyZ();
            a[i] = lb.futilityZ();
            n[i] = SampleSize.atFraction(Math.min(1, t[i]), max);
        }
        Map<String, Double> w = plan.allocation();
        double wMax = w.values().stream().mapToDouble(Double::doubleValue).max().orElseThrow();
        double wc = w.get(plan.control());
        double wt = w.entrySet().stream().filter(e -> !e.getKey().equals(plan.control()))
                .mapToDouble(Map.Entry::getValue).findFirst().orElseThrow();
        return new ZScalePlan(t, b, a, p.sides(), n, p, max * wc / wMax, max * wt / wMax);
    }

    /**
     * The Z-scale view of planned boundaries alone, with {@code maxUnitsPerArm} at t = 1 and a 1:1 split;
     * without a metric there is no effect scale, so {@link #drift} is not available (work with theta).
     */
    public static ZScalePlan of(BoundarySet set, long maxUnitsPerArm) {
        List<LookBoundary> looks = set.looks();
        int k = looks.size();
        double[] t = new double[k];
        double[] b = new double[k];
        double[] a = new double[k];
        long[] n = new long[k];
        for (int i = 0; i < k; i++) {
            LookBoundary lb = looks.get(i);
            t[i] = lb.informationFraction();
            b[i] = lb.efficacyZ();
            a[i] = lb.futilityZ();
            n[i] = SampleSize.atFraction(Math.min(1, t[i]), maxUnitsPerArm);
        }
        return new ZScalePlan(t, b, a, set.design().sides(), n, null, maxUnitsPerArm, maxUnitsPerArm);
    }

    /** Drift theta at full information for an absolute effect on the metric's scale. */
    public double drift(double effect) {
        return effect / sdOfDifferenceAtMax(effect);
    }

    /** Standard deviation of the estimated difference at the maximum size, under the given effect. */
    public double sdOfDifferenceAtMax(double effect) {
        if (primary == null) {
            throw new StatsException("boundaries without a metric have no effect scale; give theta instead");
        }
        if (primary.type() == MetricType.PROPORTION) {
            double pc = primary.baselineRate();
            double pt = pc + effect;
            return Math.sqrt(pc * (1 - pc) / controlMax + pt * (1 - pt) / treatmentMax);
        }
        double sd = primary.sd();
        return sd * Math.sqrt(1 / controlMax + 1 / treatmentMax);
    }

    public int looks() {
        return timing.length;
    }

    public int sides() {
        return sides;
    }

    public double[] timing() {
        return timing.clone();
    }

    public double[] efficacy() {
        return efficacy.clone();
    }

    /** Futility bounds, NaN where there is none. */
    public double[] futility() {
        return futility.clone();
    }

    public boolean hasFutility() {
        for (double a : futility) {
            if (a == a) {
                return true;
            }
        }
        return false;
    }

    /** Units per arm (largest arm) at each planned look. */
    public long[] unitsAtLook() {
        return unitsAtLook.clone();
    }
}
