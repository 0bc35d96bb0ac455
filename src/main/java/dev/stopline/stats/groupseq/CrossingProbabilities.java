package dev.stopline.stats.groupseq;

import dev.stopline.stats.StatsException;

/**
 * Probabilities that a group-sequential Z statistic first leaves its continuation region
 * {@code lower[k] < Z_k < upper[k]} above or below at each look, under drift {@code theta}
 * (canonical joint distribution, Jennison &amp; Turnbull 2000, sec. 3.1: Z_k ~ N(theta sqrt t_k, 1),
 * Cov(Z_j, Z_k) = sqrt(t_j / t_k), j &lt;= k). Computed by the numerical-integration recursion of
 * Armitage, McPherson &amp; Rowe (1969) on the grid of Jennison &amp; Turnbull (2000, ch. 19) with
 * r = 16; see {@link GridRecursion} for the formulas. Accuracy: about 1e-7 absolute or better on the
 * probabilities (asserted against seeded Monte Carlo and against a finer grid in the tests).
 * Cost: O(K m^2) with m &lt;= 12r + 1 = 193 points per look.
 */
public final class CrossingProbabilities {
    private CrossingProbabilities() {
    }

    /**
     * Per-look probabilities of FIRST exit above {@code upper[k]} and below {@code lower[k]}
     * (continuation region {@code lower < z < upper}).
     *
     * @param timing information fractions t_k, finite, strictly increasing, &gt; 0 (may exceed 1)
     * @param lower  lower bounds, may be {@code Double.NEGATIVE_INFINITY}
     * @param upper  upper bounds, may be {@code Double.POSITIVE_INFINITY}; {@code lower[k] <= upper[k]}
     * @param theta  drift at full information (t = 1), finite
     */
    public static Result compute(double[] timing, double[] lower, double[] upper, double theta) {
        validate(timing, lower, upper, theta);
        int k = timing.length;
        double[] up = new double[k];
        double[] lo = new double[k];
        GridRecursion g = new GridRecursion(theta, GridRecursion.DEFAULT_R);
        for (int i = 0; i < k; i++) {
            g.beginLook(timing[i]);
            up[i] = g.upperExit(upper[i]);
            lo[i] = g.lowerExit(lower[i]);
            if (i + 1 < k) {
                g.endLook(lower[i], upper[i], Double.NaN, Double.NaN, timing[i + 1]);
            }
        }
        return new Result(up, lo);
    }

    static void validate(double[] timing, double[] lower, double[] upper, double theta) {
        if (timing == null || lower == null || upper == null) {
            throw new StatsException("timing, lower and upper must not be null");
        }
        if (timing.length == 0) {
            throw new StatsException("number of looks must be >= 1, got 0");
        }
        if (lower.length != timing.length || upper.length != timing.length) {
            throw new StatsException("timing, lower and upper must have the same length, got %d, %d, %d",
                    timing.length, lower.length, upper.length);
        }
        if (!Double.isFinite(theta)) {
            throw new StatsException("drift theta %s must be finite", theta);
        }
        double previous = 0;
        for (int i = 0; i < timing.length; i++) {
            double t = timing[i];
            if (!(t > previous && t < Double.POSITIVE_INFINITY)) {
                throw new StatsException("information fractions must be finite, > 0 and strictly increasing: t[%d] = %s after %s",
                        i, t, previous);
            }
            previous = t;
            if (!(lower[i] <= upper[i]) || lower[i] == Double.POSITIVE_INFINITY || upper[i] == Double.NEGATIVE_INFINITY) {
                throw new StatsException("bounds at look %d must satisfy -inf <= lower <= upper <= +inf, lower < +inf, "
                        + "upper > -inf and not NaN: lower = %s, upper = %s", i + 1, lower[i], upper[i]);
            }
        }
    }

    /** Per-look first-exit probabilities above ({@code upper}) and below ({@code lower}). Arrays are copies. */
    public record Result(double[] upper, double[] lower) {
        public Result {
            upper = upper.clone();
            lower = lower.clone();
        }

        @Override
        public double[] upper() {
            return upper.clone();
        }

        @Override
        public double[] lower() {
            return lower.clone();
        }

        /** Sum over looks of the upper exits. */
        public double totalUpper() {
            return sum(upper);
        }

        /** Sum over looks of the lower exits. */
        public double totalLower() {
            return sum(lower);
        }

        private static double sum(double[] x) {
            double s = 0;
            for (double v : x) {
                s += v;
            }
            return s;
        }
    }
}
