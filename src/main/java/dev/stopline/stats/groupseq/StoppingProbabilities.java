package dev.stopline.stats.groupseq;

import dev.stopline.stats.StatsException;

/**
 * Per-look probabilities that a group-sequential test stops for efficacy (above, below) or for
 * futility, under drift {@code theta}, with the stopping rule the evaluator applies: one-sided, stop
 * for efficacy when {@code Z_k >= b_k} and for futility when {@code Z_k <= a_k}; two-sided, efficacy
 * when {@code |Z_k| >= b_k} and futility when {@code |Z_k| <= a_k} (the inner futility region of
 * {@link Boundaries}). Futility is obeyed as a stopping rule even when it is non-binding, because the
 * question is how the plan behaves when it is followed.
 *
 * <p>Same canonical joint distribution and recursion as {@link CrossingProbabilities} (Armitage,
 * McPherson &amp; Rowe 1969; Jennison &amp; Turnbull 2000, ch. 19, r = 16). Adaptation: the
 * continuation region of a two-sided design with futility is the union {@code (-b, -a) U (a, b)},
 * which {@link CrossingProbabilities} (one interval) cannot express; {@link GridRecursion} already
 * integrates over such unions, so this class only adds the per-look bookkeeping. Where both apply
 * (no inner futility region) the two agree to rounding (asserted in the tests).
 */
public final class StoppingProbabilities {
    private StoppingProbabilities() {
    }

    /**
     * @param timing   information fractions t_k, strictly increasing, &gt; 0
     * @param sides    1 or 2
     * @param efficacy efficacy bounds b_k (may be +infinity: no efficacy stop at that look)
     * @param futility futility bounds a_k, NaN where there is none; null for no futility at all
     * @param theta    drift at full information
     */
    public static Result compute(double[] timing, int sides, double[] efficacy, double[] futility, double theta) {
        int k = timing.length;
        double[] lo = new double[k];
        for (int i = 0; i < k; i++) {
            lo[i] = sides == 2 ? -efficacy[i] : Double.NEGATIVE_INFINITY;
        }
        CrossingProbabilities.validate(timing, lo, efficacy, theta);
        if (sides != 1 && sides != 2) {
            throw new StatsException("sides %d not in [1, 2]", sides);
        }
        if (futility != null && futility.length != k) {
            throw new StatsException("futility must have one bound per look, got %d for %d looks", futility.length, k);
        }
        double[] up = new double[k];
        double[] down = new double[k];
        double[] fut = new double[k];
        GridRecursion g = new GridRecursion(theta, GridRecursion.DEFAULT_R);
        for (int i = 0; i < k; i++) {
            double a = futility == null ? Double.NaN : Math.min(futility[i], efficacy[i]);
            g.beginLook(timing[i]);
            up[i] = g.upperExit(efficacy[i]);
            down[i] = sides == 2 ? g.lowerExit(-efficacy[i]) : 0;
            if (a == a) {
                fut[i] = sides == 2 ? g.innerExit(a) : g.lowerExit(a);
            }
            if (i + 1 < k) {
                g.endLook(sides, efficacy[i], a, timing[i + 1]);
            }
        }
        return new Result(up, down, fut);
    }

    /**
     * Per-look first-stop probabilities. Arrays are copies.
     *
     * @param efficacyUpper stop for efficacy with Z above the upper bound
     * @param efficacyLower stop for efficacy with Z below the lower bound (two-sided only; zeros otherwise)
     * @param futility      stop for futility
     */
    public record Result(double[] efficacyUpper, double[] efficacyLower, double[] futility) {
        public Result {
            efficacyUpper = efficacyUpper.clone();
            efficacyLower = efficacyLower.clone();
            futility = futility.clone();
        }

        @Override
        public double[] efficacyUpper() {
            return efficacyUpper.clone();
        }

        @Override
        public double[] efficacyLower() {
            return efficacyLower.clone();
        }

        @Override
        public double[] futility() {
            return futility.clone();
        }

        /** Probability of stopping at look k (0-based) for any reason, the final look taking all that is left. */
        public double[] stopAtLook() {
            int k = efficacyUpper.length;
            double[] p = new double[k];
            double reached = 1;
            for (int i = 0; i < k - 1; i++) {
                p[i] = efficacyUpper[i] + efficacyLower[i] + futility[i];
                reached -= p[i];
            }
            p[k - 1] = Math.max(0, reached);
            return p;
        }

        public double efficacy() {
            double s = 0;
            for (int i = 0; i < efficacyUpper.length; i++) {
                s += efficacyUpper[i] + efficacyLower[i];
            }
            return s;
        }

        public double futilityTotal() {
            double s = 0;
            for (double f : futility) {
                s += f;
            }
            return s;
        }
    }
}
