package dev.stopline.stats.groupseq;

import dev.stopline.stats.Check;
import dev.stopline.stats.Normal;
import dev.stopline.stats.StatsException;
import java.util.Arrays;
import org.apache.commons.math3.analysis.solvers.BrentSolver;
import org.apache.commons.math3.exception.TooManyEvaluationsException;

/**
 * Inference when a group-sequential test stops: repeated confidence intervals, the stage-wise-ordering
 * p-value, the median-unbiased estimate, and conditional power.
 *
 * <p>Scale (as in {@link CrossingProbabilities}): {@code Z_k ~ N(theta sqrt(t_k), 1)} with
 * {@code Cov(Z_j, Z_k) = sqrt(t_j / t_k)}; {@code theta = delta sqrt(I_max)} is the drift at full
 * information. With the current estimate {@code delta_hat} and its standard error {@code se_k} at look
 * {@code k}, {@code I_k = 1 / se_k^2} and {@code I_max = I_k / t_k}, hence {@code delta = theta se_k sqrt(t_k)}
 * ({@link #toEffect}).
 *
 * <p>An instance holds the looks <em>taken so far</em> (the last one is the current look) with the
 * continuation region {@code lower[j] < Z_j < upper[j]} that applied at each; {@code upper} is the efficacy
 * boundary of the level-alpha design evaluated at these looks (for flexible looks, from
 * {@link Boundaries#next}), {@code lower} is {@code -upper} for a symmetric two-sided test, the binding
 * futility boundary, or {@code -infinity}.
 *
 * <h2>Formulas</h2>
 * <ul>
 *   <li><b>Repeated confidence interval</b> [1, ch. 9] at look {@code k}: {@code delta_hat +/- c_k se_k},
 *   {@code c_k} the two-sided efficacy boundary of the level-alpha design at the looks taken. The sequence
 *   covers delta at all looks simultaneously with probability {@code 1 - alpha}, whatever the stopping
 *   rule. A one-sided design gives the one-sided interval {@code [delta_hat - c_k se_k, +inf)}. Futility
 *   boundaries play no role (only a design whose efficacy boundary ignores futility, i.e. no futility or
 *   non-binding futility, gives the stated coverage).</li>
 *   <li><b>Stage-wise ordering p-value</b> [1, sec. 8.4] on stopping at look {@code k} with {@code Z_k = z}:
 *   outcomes "more extreme" are crossing the upper boundary at an earlier look, or reaching look {@code k}
 *   and observing a larger {@code Z_k}:
 *   {@code p_+(z; theta) = sum_{j<k} P_theta(first exit above upper_j at j) + P_theta(continue to k, Z_k >= z)}.
 *   One-sided p is {@code p_+(z; 0)}; two-sided (symmetric design) p is {@code min(1, 2 p_+(|z|; 0))}
 *   with the mirrored ordering for negative z. At the first look this is the nominal p-value.</li>
 *   <li><b>Median-unbiased estimate</b> [1, sec. 8.3-8.4]: the drift {@code theta} solving
 *   {@code p_+(z; theta) = 1/2} (increasing in theta), converted with {@link #toEffect}. Found by Brent's
 *   method with an explicit evaluation limit.</li>
 *   <li><b>Conditional power</b> [1, ch. 10; 2] with the B-value {@code B(t) = Z(t) sqrt(t)}: given
 *   {@code B(t_j) = b}, the increment {@code B(t) - b} is Brownian motion with drift theta, so the future
 *   statistics are again in canonical form on the time scale {@code s_m = t_m - t_j}, with boundaries
 *   shifted to {@code (c_m sqrt(t_m) - b) / sqrt(s_m)}; {@link CrossingProbabilities} then gives the
 *   probability of crossing an upper boundary before a lower one. With a single remaining look at
 *   {@code t = 1} this is the closed form {@code 1 - Phi((c sqrt(1) - b - theta (1 - t_j)) / sqrt(1 - t_j))}
 *   [2].</li>
 * </ul>
 *
 * <p>References:
 * <ol>
 *   <li>Jennison C, Turnbull BW (2000). Group Sequential Methods with Applications to Clinical Trials.
 *       Chapman &amp; Hall/CRC. Ch. 8 (p-values, estimates), ch. 9 (repeated confidence intervals), ch. 10
 *       (stochastic curtailment).</li>
 *   <li>Lan KKG, Simon R, Halperin M (1982). Stochastically curtailed tests in long-term clinical trials.
 *       Communications in Statistics C 1(3), 207-219. doi:10.1080/07474948208836014</li>
 *   <li>Brent RP (1973). Algorithms for Minimization without Derivatives. Prentice-Hall, ch. 4.</li>
 * </ol>
 */
public final class SequentialInference {
    /** Evaluation budget of the median-unbiased root search (bracketing plus Brent). */
    public static final int MAX_EVALUATIONS = 100;
    private static final int MAX_BRACKET_STEPS = 12;
    private static final double DRIFT_ACCURACY = 1e-7;

    private final double[] timing;
    private final double[] lower;
    private final double[] upper;
    private final int sides;

    private SequentialInference(double[] timing, double[] lower, double[] upper, int sides) {
        this.timing = timing;
        this.lower = lower;
        this.upper = upper;
        this.sides = sides;
    }

    /**
     * Looks taken so far (the last is the current look) and their continuation regions.
     *
     * @param timing information fractions, strictly increasing, > 0 (may exceed 1 on an overrun)
     * @param lower  lower continuation bound per look ({@code -upper} two-sided, futility, or -infinity)
     * @param upper  efficacy boundary per look (finite)
     * @param sides  1 or 2; two-sided requires {@code lower = -upper}
     */
    public static SequentialInference of(double[] timing, double[] lower, double[] upper, int sides) {
        Check.inRange("sides", sides, 1, 2);
        int k = timing.length;
        if (k == 0 || lower.length != k || upper.length != k) {
            throw new StatsException("timing (%d), lower (%d) and upper (%d) must have the same length >= 1",
                    k, lower.length, upper.length);
        }
        for (int j = 0; j < k; j++) {
            Check.positive("information fraction", timing[j]);
            Check.finite("efficacy boundary", upper[j]);
            if (j > 0 && !(timing[j] > timing[j - 1])) {
                throw new StatsException("information fractions must increase strictly (got %s)",
                        Arrays.toString(timing));
            }
            if (!(lower[j] < upper[j])) {
                throw new StatsException("lower bound %s must be below upper bound %s at look %d",
                        lower[j], upper[j], j + 1);
            }
            if (sides == 2 && lower[j] != -upper[j]) {
                throw new StatsException("two-sided inference needs symmetric bounds (look %d: %s, %s)",
                        j + 1, lower[j], upper[j]);
            }
        }
        return new SequentialInference(timing.clone(), lower.clone(), upper.clone(), sides);
    }

    /**
     * The looks of a computed plan up to and including {@code currentLook} (1-based). Two-sided plans use
     * the symmetric efficacy bounds; one-sided plans use the futility bound as lower bound only when it is
     * binding.
     */
    public static SequentialInference fromPlan(BoundarySet plan, int currentLook) {
        int k = Check.inRange("current look", currentLook, 1, plan.looks().size());
        int sides = plan.design().sides();
        double[] t = new double[k];
        double[] lo = new double[k];
        double[] up = new double[k];
        for (int j = 0; j < k; j++) {
            LookBoundary b = plan.looks().get(j);
            t[j] = b.informationFraction();
            up[j] = b.efficacyZ();
            lo[j] = lowerBound(b, sides, plan.nonBindingFutility());
        }
        return of(t, lo, up, sides);
    }

    static double lowerBound(LookBoundary b, int sides, boolean nonBinding) {
        if (sides == 2) {
            return -b.efficacyZ();
        }
        return Double.isNaN(b.futilityZ()) || nonBinding ? Double.NEGATIVE_INFINITY : b.futilityZ();
    }

    /** Number of looks taken (the current look is this, 1-based). */
    public int currentLook() {
        return timing.length;
    }

    /** Information fraction of the current look. */
    public double currentFraction() {
        return timing[timing.length - 1];
    }

    /** Efficacy boundary of the current look. */
    public double currentBoundary() {
        return upper[upper.length - 1];
    }

    // ------------------------------------------------------------------ repeated confidence interval

    /** Repeated confidence interval {@code estimate +/- c_k se} (one-sided: upper end +infinity). */
    public Interval repeatedConfidenceInterval(double estimate, double standardError) {
        Check.finite("estimate", estimate);
        Check.positive("standard error", standardError);
        double half = currentBoundary() * standardError;
        double hi = sides == 2 ? estimate + half : Double.POSITIVE_INFINITY;
        return new Interval(estimate - half, hi);
    }

    // ------------------------------------------------------------------ stage-wise p-value

    /** Stage-wise-ordering p-value of {@code Z_k = z} at the current look under theta = 0 (see class doc). */
    public double adjustedPValue(double z) {
        Check.finite("z", z);
        if (sides == 1) {
            return upperOrderingProbability(timing, lower, upper, z, 0.0);
        }
        double p = upperOrderingProbability(timing, lower, upper, Math.abs(z), 0.0);
        return Math.min(1.0, 2.0 * p);
    }

    /**
     * {@code p_+(z; theta)}: probability under drift theta of an upper crossing before the last look, or of
     * reaching the last look with {@code Z >= z}.
     */
    static double upperOrderingProbability(double[] t, double[] lo, double[] up, double z, double theta) {
        int k = t.length;
        double[] u = up.clone();
        double[] l = lo.clone();
        u[k - 1] = z;
        l[k - 1] = Double.NEGATIVE_INFINITY;
        return Math.min(1.0, CrossingProbabilities.compute(t, l, u, theta).totalUpper());
    }

    // ------------------------------------------------------------------ median-unbiased estimate

    /**
     * Median-unbiased estimate of the drift theta under stage-wise ordering; for a negative z in a two-sided
     * design the mirrored (lower) ordering is used. Returns the drift and the evaluation count.
     */
    public Estimate medianUnbiasedDrift(double z) {
        Check.finite("z", z);
        if (sides == 2 && z < 0) {
            Estimate mirrored = solveMedian(timing, negate(upper), negate(lower), -z);
            return new Estimate(-mirrored.drift(), mirrored.evaluations());
        }
        return solveMedian(timing, lower, upper, z);
    }

    /**
     * Median-unbiased estimate on the effect scale, given the standard error of the estimate at the current
     * look: {@code delta = theta_MUE se sqrt(t_k)}.
     */
    public double medianUnbiasedEffect(double z, double standardError) {
        Check.positive("standard error", standardError);
        return toEffect(medianUnbiasedDrift(z).drift(), standardError, currentFraction());
    }

    private static Estimate solveMedian(double[] t, double[] lo, double[] up, double z) {
        int[] count = {0};
        org.apache.commons.math3.analysis.UnivariateFunction f = theta -> {
            count[0]++;
            return upperOrderingProbability(t, lo, up, z, theta) - 0.5;
        };
        double naive = z / Math.sqrt(t[t.length - 1]);
        double step = 1.0 / Math.sqrt(t[0]);
        double a = naive - step;
        double b = naive + step;
        double fa = f.value(a);
        double fb = f.value(b);
        for (int i = 0; i < MAX_BRACKET_STEPS && fa > 0; i++) {
            b = a;
            fb = fa;
            step *= 2;
            a -= step;
            fa = f.value(a);
        }
        for (int i = 0; i < MAX_BRACKET_STEPS && fb < 0; i++) {
            a = b;
            fa = fb;
            step *= 2;
            b += step;
            fb = f.value(b);
        }
        if (fa > 0 || fb < 0) {
            throw new StatsException("median-unbiased estimate not bracketed within %d doublings (z = %s)",
                    MAX_BRACKET_STEPS, z);
        }
        BrentSolver solver = new BrentSolver(DRIFT_ACCURACY);
        int budget = MAX_EVALUATIONS - count[0];
        try {
            double root = solver.solve(budget, f, a, b);
            return new Estimate(root, count[0]);
        } catch (TooManyEvaluationsException e) {
            throw new StatsException("median-unbiased estimate did not converge to %s within %d evaluations",
                    DRIFT_ACCURACY, MAX_EVALUATIONS);
        }
    }

    // ------------------------------------------------------------------ conditional power

    /**
     * Conditional power: probability, given {@code Z = zNow} at fraction {@code tNow}, that a future
     * statistic crosses its upper boundary before any crosses its lower one, under drift theta.
     *
     * @param tNow         current information fraction in [0, 1); at 0 the value of zNow is ignored (B = 0)
     * @param zNow         current z statistic
     * @param futureTiming fractions of the remaining looks, strictly increasing, all above tNow
     * @param futureLower  lower bounds at the remaining looks (may be -infinity)
     * @param futureUpper  efficacy boundaries at the remaining looks
     * @param theta        drift at full information
     */
    public static double conditionalPower(double tNow, double zNow, double[] futureTiming,
                                          double[] futureLower, double[] futureUpper, double theta) {
        Check.nonNegative("current information fraction", tNow);
        Check.finite("z", zNow);
        Check.finite("theta", theta);
        int m = futureTiming.length;
        if (m == 0 || futureLower.length != m || futureUpper.length != m) {
            throw new StatsException("future timing (%d), lower (%d) and upper (%d) must have the same length >= 1",
                    m, futureLower.length, futureUpper.length);
        }
        double b = tNow == 0 ? 0.0 : zNow * Math.sqrt(tNow);
        double[] s = new double[m];
        double[] lo = new double[m];
        double[] up = new double[m];
        for (int i = 0; i < m; i++) {
            s[i] = futureTiming[i] - tNow;
            if (!(s[i] > 0)) {
                throw new StatsException("future look %s must come after the current fraction %s",
                        futureTiming[i], tNow);
            }
            double root = Math.sqrt(futureTiming[i]);
            double rs = Math.sqrt(s[i]);
            up[i] = (futureUpper[i] * root - b) / rs;
            lo[i] = futureLower[i] == Double.NEGATIVE_INFINITY ? futureLower[i] : (futureLower[i] * root - b) / rs;
        }
        if (m == 1) {
            // Lan, Simon & Halperin (1982): 1 - Phi((c sqrt(t_K) - b - theta s) / sqrt(s)), lower bound irrelevant
            return Normal.upperTail(up[0] - theta * Math.sqrt(s[0]));
        }
        return Math.min(1.0, CrossingProbabilities.compute(s, lo, up, theta).totalUpper());
    }

    /**
     * Conditional power at look {@code currentLook} (1-based) of a computed plan, for its remaining looks,
     * under drift theta. Lower bounds follow {@link #fromPlan}: {@code -c} two-sided, binding futility or none
     * one-sided.
     */
    public static double conditionalPower(BoundarySet plan, int currentLook, double zNow, double theta) {
        int k = Check.inRange("current look", currentLook, 1, plan.looks().size() - 1);
        int m = plan.looks().size() - k;
        int sides = plan.design().sides();
        double[] t = new double[m];
        double[] lo = new double[m];
        double[] up = new double[m];
        for (int i = 0; i < m; i++) {
            LookBoundary b = plan.looks().get(k + i);
            t[i] = b.informationFraction();
            up[i] = b.efficacyZ();
            lo[i] = lowerBound(b, sides, plan.nonBindingFutility());
        }
        return conditionalPower(plan.looks().get(k - 1).informationFraction(), zNow, t, lo, up, theta);
    }

    /** The current-trend drift {@code z / sqrt(t)}: the naive estimate of theta at fraction t. */
    public static double currentTrendDrift(double z, double t) {
        Check.positive("information fraction", t);
        return z / Math.sqrt(t);
    }

    /** Converts a drift theta to the effect scale: {@code delta = theta se sqrt(t)} (see class doc). */
    public static double toEffect(double theta, double standardError, double t) {
        return theta * standardError * Math.sqrt(t);
    }

    private static double[] negate(double[] x) {
        double[] y = new double[x.length];
        for (int i = 0; i < x.length; i++) {
            y[i] = -x[i];
        }
        return y;
    }

    /** A confidence interval; an open end is infinite. */
    public record Interval(double lower, double upper) {
        public boolean contains(double x) {
            return x >= lower && x <= upper;
        }
    }

    /** A drift estimate and the number of function evaluations its root search used. */
    public record Estimate(double drift, int evaluations) {
    }
}
