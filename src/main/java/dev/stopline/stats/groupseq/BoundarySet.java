package dev.stopline.stats.groupseq;

import dev.stopline.stats.Check;
import java.util.List;

/**
 * The computed boundaries of a {@link Design}, with the drift that gives the design power, the
 * inflation factor and expected information. Immutable.
 */
public final class BoundarySet {
    private final Design design;
    private final List<LookBoundary> looks;
    private final double drift;
    private final double[] timing;
    private final double[] efficacy;
    private final double[] futility;
    private final SolverCounts counts;

    /**
     * Root-finder effort behind a computation (asserted by tests; also useful when profiling).
     * {@code outerEvaluations} counts every pass of an outer solve; {@code fineDriftEvaluations} the
     * passes of a futility design's drift solve on the full grid (the rest ran on the coarse grid).
     */
    record SolverCounts(int boundEvaluations, int worstBoundSolve, int outerEvaluations, int fineDriftEvaluations) {
    }

    BoundarySet(Design design, List<LookBoundary> looks, double drift, double[] timing, double[] efficacy,
                double[] futility, SolverCounts counts) {
        this.design = design;
        this.looks = List.copyOf(looks);
        this.drift = drift;
        this.timing = timing.clone();
        this.efficacy = efficacy.clone();
        this.futility = futility == null ? null : futility.clone();
        this.counts = counts;
    }

    public List<LookBoundary> looks() {
        return looks;
    }

    public Design design() {
        return design;
    }

    /**
     * theta (drift at full information, theta = delta sqrt(I_max)) at which the design has its power:
     * with futility, where the futility and efficacy boundaries meet at the last look; otherwise the
     * root of P_theta(reject H0) = power (both sides counted when two-sided). NaN without power.
     */
    public double drift() {
        return drift;
    }

    /**
     * R = I_max / I_fixed = (theta / (z_{1-alpha/sides} + z_{power}))^2: the maximum information
     * relative to a fixed-sample test of the same level and power (Jennison &amp; Turnbull 2000,
     * sec. 2.4). NaN without power.
     */
    public double inflationFactor() {
        if (!(drift == drift)) {
            return Double.NaN;
        }
        double fixed = dev.stopline.stats.Normal.upperQuantile(design.alpha() / design.sides())
                + dev.stopline.stats.Normal.quantile(design.power());
        return (drift / fixed) * (drift / fixed);
    }

    /** True when efficacy was computed as if the futility boundary did not exist. */
    public boolean nonBindingFutility() {
        return futility != null && !design.bindingFutility();
    }

    /**
     * E[t at stop] under drift theta: t_1 + sum_{k &lt; K} (t_{k+1} - t_k) P(continue past look k),
     * with futility obeyed as a stopping rule (also when non-binding). Computed by the same recursion
     * as {@link CrossingProbabilities}.
     */
    public double expectedInformationFraction(double theta) {
        Check.finite("drift theta", theta);
        GridRecursion g = new GridRecursion(theta, GridRecursion.DEFAULT_R);
        double e = timing[0];
        for (int k = 0; k + 1 < timing.length; k++) {
            g.beginLook(timing[k]);
            g.endLook(design.sides(), efficacy[k], futility == null ? Double.NaN : futility[k], timing[k + 1]);
            e += (timing[k + 1] - timing[k]) * Math.min(1, g.continuationMass());
        }
        return e;
    }

    SolverCounts solverCounts() {
        return counts;
    }

    @Override
    public String toString() {
        return "BoundarySet[" + design + ", drift=" + drift + ", looks=" + looks + "]";
    }
}
