package dev.stopline.stats.groupseq;

import dev.stopline.stats.Normal;
import dev.stopline.stats.StatsException;
import java.util.ArrayList;
import java.util.List;
import java.util.Objects;
import java.util.function.DoubleUnaryOperator;

/**
 * Computes group-sequential boundaries on the Z scale.
 *
 * <h2>Efficacy by alpha spending (Lan &amp; DeMets 1983)</h2>
 * Look by look, under theta = 0, the bound b_k solves
 * {@code P_0(continue to k, Z_k >= b_k) = alpha(t_k) - alpha(t_{k-1})} with the per-side spending
 * function at level alpha / sides; the probability comes from the {@link GridRecursion}. Two-sided
 * tests use the symmetric continuation region (-b_k, b_k), so each side spends half. The root finder
 * works on {@code log P - log(increment)}, which keeps relative accuracy for the tiny early
 * increments of O'Brien-Fleming-type spending. A zero increment gives b_k = +infinity.
 *
 * <h2>Classical (Pocock 1977; O'Brien &amp; Fleming 1979)</h2>
 * b_k = C s_k with s_k = 1 (Pocock) or 1 / sqrt(t_k) (O'Brien-Fleming); C solves
 * P_0(reject at some look) = alpha by an outer root find, each evaluation a full recursion.
 *
 * <h2>Futility by beta spending</h2>
 * With futility spending beta(t) at level beta and the drift theta, a_k solves
 * {@code P_theta(continue to k, Z_k <= a_k) = beta(t_k) - beta(t_{k-1})} (one-sided), or, for
 * two-sided designs, {@code P_theta(continue to k, |Z_k| <= a_k) = increment}: our choice for two-sided
 * designs is a symmetric inner futility region |Z| &lt; a_k (stop for futility when the effect is
 * near zero on either side). theta is found by an outer root find so that a_K = b_K at the last look
 * (the construction of Pampallona &amp; Tsiatis 1994 and Jennison &amp; Turnbull 2000, sec. 7.2 with
 * error spending): then the type II error is exactly beta and the power 1 - beta at theta. Binding:
 * efficacy is computed with the futility region as stopping under H0 (it depends on theta and is
 * recomputed in the outer loop). Non-binding: efficacy is computed once, as if futility did not
 * exist; the power still counts futility stops. If a_k would exceed b_k before the last look it is
 * set to b_k (the design then stops at look k for sure).
 *
 * <h2>Flexible looks</h2>
 * {@link #flexible} recomputes all boundaries at the information fractions actually reached,
 * spending alpha(t_k) - alpha(t_{k-1}); a final look at t &gt;= 1 spends what is left,
 * alpha - alpha(t_{k-1}), and its futility bound equals its efficacy bound (a decision is due).
 * Futility uses the design drift.
 *
 * <p>Effort: per look one O(m^2) density update (m &lt;= 193) per recursion and a bounded
 * root-finder solve of O(m) evaluations; the root-finder budgets are explicit constants below.
 *
 * <h2>Design note: the drift solve with futility (measured reasons)</h2>
 * Each drift evaluation is a full forward pass (two recursions when binding), 0.7-0.9 ms of CPU on
 * the r = 16 grid for K = 10 two-sided, and Brent needed 6-10 of them: 4.5-6 ms. Now:
 * <ol>
 *   <li>Bound solves are Newton steps on the log exit probability, safeguarded by a bracket
 *       ({@link RootFinder#solveNewton}); the slope is the exit sum with the density in place of
 *       the tail, from the exponential the tail already computes. Each drift evaluation starts every
 *       look's solve from that look's bound in the previous evaluation: 2 evaluations per solve
 *       instead of 6-9.</li>
 *   <li>The drift is first found on a coarse grid (r = {@link #COARSE_R}, about a seventh of the
 *       density work) to {@link #COARSE_TOL} by secant steps from the fixed-sample drift (4-7
 *       passes, Brent as fallback); the fine stage starts there, takes its first secant
 *       step with the coarse slope, and stops after 2 full-grid passes on all 16 K = 10 designs we
 *       measured (interpolating the bounds linearly to the secant root when the Lagrange remainder
 *       bound is below ~1e-10, see {@code secant}).</li>
 *   <li>H0 recursions over symmetric regions integrate half the rows (see GridRecursion).</li>
 * </ol>
 * Measured (thread CPU time, min of 60 runs after warm-up, old and new back to back at load average
 * 10-13 on the shared 2-core machine; all 16 designs in DEVELOPERS.md): K = 10 one-sided binding
 * Hwang-Shih-DeCani(-2) futility 2.12 -&gt; 0.62 ms; two-sided binding O'Brien-Fleming-type
 * 5.47 -&gt; 1.95 ms. Against plain bisection the bounds agree within 1e-10 (DriftSolveTest).
 *
 * <p>References: Lan KKG, DeMets DL (1983) Biometrika 70:659-663; Pocock SJ (1977) Biometrika
 * 64:191-199; O'Brien PC, Fleming TR (1979) Biometrics 35:549-556; Pampallona S, Tsiatis AA (1994)
 * J Statistical Planning and Inference 42:19-35; Jennison C, Turnbull BW (2000) Group Sequential
 * Methods with Applications to Clinical Trials, Chapman &amp; Hall/CRC.
 */
public final class Boundaries {
    /** Bound solves: tolerance on z, and on log(P / increment). */
    static final double BOUND_X_TOL = 1e-10;
    static final double BOUND_LOG_TOL = 1e-11;
    /** Evaluation budget of one bound solve (bracketing plus Brent). */
    static final int BOUND_MAX_EVALUATIONS = 60;
    /** Outer solves (drift, classical constant): tolerance on theta or C. */
    static final double OUTER_X_TOL = 1e-9;
    static final double OUTER_F_TOL = 1e-9;
    static final int OUTER_MAX_EVALUATIONS = 60;
    /**
     * Drift solve with futility, coarse stage: grid parameter and tolerance (on theta and on the gap).
     * The coarse root only seeds the fine stage, so its grid error (measured below 1e-4 in theta at
     * r = 6) costs at most one secant step there.
     */
    static final int COARSE_R = 6;
    static final double COARSE_TOL = 1e-6;
    /** Secant steps per stage before falling back to Brent, and the fine stage's interpolation criterion. */
    static final int FINE_MAX_STEPS = 8;
    static final double INTERPOLATION_TOL = 1e-10;
    /** d(b_K - a_K) / d theta is -1.3 to -1.8 for the K=10 designs measured; the first secant step uses -1.5. */
    static final double TYPICAL_SLOPE = -1.5;
    /** Increments below this are treated as zero (their bound is at infinity). */
    private static final double NEGLIGIBLE = 1e-300;
    /** log of a zero probability, finite so that Brent's interpolation stays defined. */
    private static final double LOG_ZERO = -800;

    private Boundaries() {
    }

    /** Boundaries of a planned design. */
    public static BoundarySet compute(Design design) {
        Objects.requireNonNull(design, "design");
        design.checkConsistent();
        double[] t = design.looks();
        RootFinder inner = new RootFinder(BOUND_X_TOL, BOUND_LOG_TOL, BOUND_MAX_EVALUATIONS);
        RootFinder outer = new RootFinder(OUTER_X_TOL, OUTER_F_TOL, OUTER_MAX_EVALUATIONS);
        return design.isSpending() ? spending(design, t, inner, outer) : classical(design, t, outer);
    }

    /**
     * Flexible looks (Lan &amp; DeMets 1983): the boundary of the CURRENT look given all fractions
     * actually reached so far (the last element is the current look; it may be unplanned and may
     * exceed 1, which makes it the final look that spends all that remains).
     */
    public static LookBoundary next(Design design, double[] fractionsSoFar) {
        List<LookBoundary> all = flexible(design, fractionsSoFar);
        return all.get(all.size() - 1);
    }

    /**
     * {@link #next(Design, double[])} for a design whose planned boundaries are already computed: the
     * futility part reuses the planned drift instead of solving for it again (the drift is a property of
     * the planned design, not of the looks reached). The daemon calls this at every look.
     */
    public static LookBoundary next(BoundarySet planned, double[] fractionsSoFar) {
        Objects.requireNonNull(planned, "planned");
        List<LookBoundary> all = flexible(planned.design(), fractionsSoFar, planned::drift);
        return all.get(all.size() - 1);
    }

    /** All boundaries recomputed at the fractions actually reached; see {@link #next}. */
    public static List<LookBoundary> flexible(Design design, double[] fractionsSoFar) {
        return flexible(design, fractionsSoFar, () -> compute(design).drift());
    }

    private static List<LookBoundary> flexible(Design design, double[] fractionsSoFar,
                                               java.util.function.DoubleSupplier plannedDrift) {
        Objects.requireNonNull(design, "design");
        design.checkConsistent();
        if (!design.isSpending()) {
            throw new StatsException("flexible looks need a spending function; classical %s boundaries are fixed "
                    + "at the planned looks", design.classical());
        }
        double[] t = checkReached(fractionsSoFar);
        int k = t.length;
        int sides = design.sides();
        SpendingFunction f = design.efficacySpending();
        double[] effInc = increments(f, t);
        double[] b = new double[k];
        double[] a = null;
        RootFinder inner = new RootFinder(BOUND_X_TOL, BOUND_LOG_TOL, BOUND_MAX_EVALUATIONS);
        if (!design.hasFutility()) {
            pass(t, sides, effInc, null, false, 0, b, null, true, inner);
        } else {
            double theta = plannedDrift.getAsDouble();
            a = new double[k];
            double[] betaInc = increments(design.futilitySpending(), t);
            boolean binding = design.bindingFutility();
            if (!binding) {
                pass(t, sides, effInc, null, false, 0, b, null, true, inner);
            }
            pass(t, sides, effInc, betaInc, binding, theta, b, a, binding, inner);
            a[k - 1] = t[k - 1] >= 1 ? b[k - 1] : Math.min(a[k - 1], b[k - 1]);
        }
        return lookBoundaries(design, t, b, a, cumulativeSpending(f, t, sides));
    }

    private static double[] checkReached(double[] fractions) {
        if (fractions == null || fractions.length == 0) {
            throw new StatsException("at least one information fraction must have been reached, got none");
        }
        if (fractions.length > Design.MAX_LOOKS) {
            throw new StatsException("number of looks %d not in [1, %d]", fractions.length, Design.MAX_LOOKS);
        }
        double previous = 0;
        for (int i = 0; i < fractions.length; i++) {
            double t = fractions[i];
            boolean last = i == fractions.length - 1;
            if (!(t > previous && t < Double.POSITIVE_INFINITY) || (!last && t >= 1)) {
                throw new StatsException("reached information fractions must be finite, > 0, strictly increasing, "
                        + "and only the last may be >= 1: t[%d] = %s after %s", i, t, previous);
            }
            previous = t;
        }
        return fractions.clone();
    }

    // ----------------------------------------------------------------------------------------------
    // Spending designs

    private static BoundarySet spending(Design design, double[] t, RootFinder inner, RootFinder outer) {
        int k = t.length;
        int sides = design.sides();
        SpendingFunction f = design.efficacySpending();
        double[] effInc = increments(f, t);
        double[] b = new double[k];
        double[] cumAlpha = cumulativeSpending(f, t, sides);
        if (!design.hasFutility()) {
            pass(t, sides, effInc, null, false, 0, b, null, true, inner);
            double theta = design.power() == design.power() ? driftForPower(design, t, b, outer) : Double.NaN;
            return new BoundarySet(design, lookBoundaries(design, t, b, null, cumAlpha), theta, t, b, null,
                    counts(inner, outer));
        }
        boolean binding = design.bindingFutility();
        double[] betaInc = increments(design.futilitySpending(), t);
        double[] a = new double[k];
        if (!binding) {
            pass(t, sides, effInc, null, false, 0, b, null, true, inner);
        }
        double fixed = Normal.upperQuantile(design.alpha() / sides) + Normal.upperQuantile(design.beta());
        DriftGap coarse = new DriftGap(t, sides, effInc, betaInc, binding, COARSE_R, b.clone(), new double[k], inner);
        RootFinder coarseOuter = new RootFinder(COARSE_TOL, COARSE_TOL, OUTER_MAX_EVALUATIONS);
        double thetaCoarse = secant(coarse, fixed * 1.05, TYPICAL_SLOPE, COARSE_TOL, false, fixed, coarseOuter);
        double[] start = binding ? coarse.b : b;
        DriftGap fine = new DriftGap(t, sides, effInc, betaInc, binding, GridRecursion.DEFAULT_R, start.clone(),
                coarse.a.clone(), inner);
        fine.warm = true;
        double theta = secant(fine, thetaCoarse, coarse.secantSlope(), OUTER_F_TOL, true, fixed, outer);
        System.arraycopy(fine.b, 0, b, 0, k);
        System.arraycopy(fine.a, 0, a, 0, k);
        a[k - 1] = b[k - 1];
        BoundarySet.SolverCounts counts = new BoundarySet.SolverCounts(inner.totalEvaluations(),
                inner.worstSolveEvaluations(), coarse.evaluations + fine.evaluations, fine.evaluations);
        return new BoundarySet(design, lookBoundaries(design, t, b, a, cumAlpha), theta, t, b, a, counts);
    }

    /**
     * Secant steps on the gap from {@code theta}, the first with {@code slope}; used for the coarse
     * stage (from the fixed-sample drift, first slope {@link #TYPICAL_SLOPE}) and the fine stage (from
     * the coarse root, with the coarse secant slope), until |gap| &lt;= tol.
     * Fine stage only ({@code interpolate}): When the next secant root theta* lies so close to the
     * last two evaluations theta_0, theta_1 that |theta* - theta_0| |theta* - theta_1| &lt;=
     * {@link #INTERPOLATION_TOL}, the bounds at theta* are interpolated linearly between them instead of
     * recomputed: the bounds are smooth in theta, so the interpolation error is that product times
     * half their second derivative (the Lagrange remainder), below 1e-10 on the z scale. If the secant
     * slope is not negative, a step leaves (1e-3, 40) or the steps run out, Brent's method from the
     * last point finishes the job. Leaves the bounds at the returned drift in {@code fine.b}, {@code fine.a}.
     */
    private static double secant(DriftGap fine, double theta, double slope, double tol, boolean interpolate,
                                 double fixed, RootFinder outer) {
        double g = fine.applyAsDouble(theta);
        for (int step = 0; Math.abs(g) > tol; step++) {
            boolean two = fine.evaluations >= 2;
            double s = two ? (g - fine.prevGap) / (theta - fine.prevTheta) : slope;
            double next = theta - g / s;
            if (!(s < 0) || !(next > 1e-3 && next < 40) || step >= FINE_MAX_STEPS) {
                double root = outer.solveDecreasing(fine, theta, 0.05 * fixed, 1e-3, 40);
                if (root != fine.lastTheta) {
                    fine.applyAsDouble(root);
                }
                return root;
            }
            if (interpolate && two && Math.abs(next - theta) * Math.abs(next - fine.prevTheta) <= INTERPOLATION_TOL) {
                fine.interpolate((next - fine.prevTheta) / (theta - fine.prevTheta));
                return next;
            }
            theta = next;
            g = fine.applyAsDouble(theta);
        }
        return theta;
    }

    /**
     * b_K - a_K as a function of the drift (decreasing: a larger drift pushes the futility bounds up),
     * on grids of parameter r. Each evaluation is a full pass whose bound solves start from the bounds of
     * the previous evaluation; the previous evaluation's bounds are kept for interpolation.
     */
    private static final class DriftGap implements DoubleUnaryOperator {
        private final double[] t;
        private final int sides;
        private final double[] effInc;
        private final double[] betaInc;
        private final boolean binding;
        private final int r;
        private final RootFinder inner;
        private final double[] b;
        private final double[] a;
        private double[] prevB;
        private double[] prevA;
        private boolean warm;
        private int evaluations;
        private double prevTheta = Double.NaN;
        private double prevGap = Double.NaN;
        private double lastTheta = Double.NaN;
        private double lastGap = Double.NaN;

        DriftGap(double[] t, int sides, double[] effInc, double[] betaInc, boolean binding, int r, double[] b,
                 double[] a, RootFinder inner) {
            this.t = t;
            this.sides = sides;
            this.effInc = effInc;
            this.betaInc = betaInc;
            this.binding = binding;
            this.r = r;
            this.b = b;
            this.a = a;
            this.inner = inner;
        }

        @Override
        public double applyAsDouble(double theta) {
            prevTheta = lastTheta;
            prevGap = lastGap;
            prevB = b.clone();
            prevA = a.clone();
            pass(t, sides, effInc, betaInc, binding, theta, b, a, binding, warm, r, inner);
            warm = true;
            evaluations++;
            lastTheta = theta;
            lastGap = b[t.length - 1] - a[t.length - 1];
            return lastGap;
        }

        /** Slope of the secant through the last two evaluations; -1.5 (a typical value) if unusable. */
        double secantSlope() {
            double s = (lastGap - prevGap) / (lastTheta - prevTheta);
            return s < -0.1 && s > -10 ? s : TYPICAL_SLOPE;
        }

        /** Replaces the bounds by prev + w (last - prev). */
        void interpolate(double w) {
            for (int j = 0; j < b.length; j++) {
                b[j] = lerp(prevB[j], b[j], w);
                a[j] = lerp(prevA[j], a[j], w);
            }
        }

        private static double lerp(double x0, double x1, double w) {
            return x0 == x1 ? x0 : x0 + w * (x1 - x0);
        }
    }

    /**
     * One forward pass over the looks. Solves b (when {@code solveEfficacy}) under theta = 0 and a
     * (when {@code betaInc != null}) under {@code theta}. The H0 recursion stops at futility only when
     * {@code binding}. The last futility bound is left unclamped (the caller compares it with b_K).
     */
    private static void pass(double[] t, int sides, double[] effInc, double[] betaInc, boolean binding, double theta,
                             double[] b, double[] a, boolean solveEfficacy, RootFinder rf) {
        pass(t, sides, effInc, betaInc, binding, theta, b, a, solveEfficacy, false, GridRecursion.DEFAULT_R, rf);
    }

    /** {@link #pass}; with {@code warm}, the bounds already in b and a are the starting guesses. */
    private static void pass(double[] t, int sides, double[] effInc, double[] betaInc, boolean binding, double theta,
                             double[] b, double[] a, boolean solveEfficacy, boolean warm, int r, RootFinder rf) {
        int k = t.length;
        boolean futility = betaInc != null;
        GridRecursion h0 = solveEfficacy ? new GridRecursion(0, r) : null;
        GridRecursion h1 = futility ? new GridRecursion(theta, r) : null;
        for (int j = 0; j < k; j++) {
            if (h0 != null) {
                h0.beginLook(t[j]);
                b[j] = efficacyBound(h0, effInc[j], warm ? b[j] : Double.NaN, rf);
            }
            if (futility) {
                h1.beginLook(t[j]);
                double ceiling = j == k - 1 ? b[j] + 20 : b[j];
                double guess = warm ? a[j] : Double.NaN;
                a[j] = sides == 1 ? futilityBelow(h1, betaInc[j], theta * Math.sqrt(t[j]), ceiling, guess, rf)
                        : futilityInner(h1, betaInc[j], theta * Math.sqrt(t[j]), ceiling, guess, rf);
            }
            if (j + 1 < k) {
                if (h0 != null) {
                    h0.endLook(sides, b[j], futility && binding ? a[j] : Double.NaN, t[j + 1]);
                }
                if (futility) {
                    h1.endLook(sides, b[j], a[j], t[j + 1]);
                }
            }
        }
    }

    /**
     * Bound solves. Each is Newton on the log exit probability (derivative: the grid sum with the
     * density in place of the tail, see {@link GridRecursion#slope()}), started from {@code warm}
     * when it is finite (the same look's bound in the previous drift evaluation) and from a rough
     * quantile otherwise.
     */
    private static double efficacyBound(GridRecursion h, double increment, double warm, RootFinder rf) {
        if (!(increment > NEGLIGIBLE)) {
            return Double.POSITIVE_INFINITY;
        }
        double logInc = Math.log(increment);
        // Under theta = 0, P(continue, Z_k > b) <= 1 - Phi(b): the root lies about at or below this guess.
        double guess = finite(warm) ? warm : NormalTail.roughUpperQuantile(Math.min(increment, 0.5));
        double[] p = new double[1];
        return rf.solveNewton(x -> log(p[0] = h.upperExit(x)) - logInc, () -> h.slope() / p[0], guess, 0.5, -10, 40);
    }

    private static double futilityBelow(GridRecursion h, double increment, double mean, double ceiling, double warm,
                                        RootFinder rf) {
        if (!(increment > NEGLIGIBLE)) {
            return Double.NEGATIVE_INFINITY;
        }
        double logInc = Math.log(increment);
        // P(continue, Z_k < a) <= Phi(a - mean): the root lies about at or above this guess.
        double guess = finite(warm) ? warm : mean - NormalTail.roughUpperQuantile(Math.min(increment, 0.5));
        double[] p = new double[1];
        return rf.solveNewton(x -> logInc - log(p[0] = h.lowerExit(x)), () -> -h.slope() / p[0], guess, 0.5,
                mean - 40, ceiling);
    }

    private static double futilityInner(GridRecursion h, double increment, double mean, double ceiling, double warm,
                                        RootFinder rf) {
        if (!(increment > NEGLIGIBLE)) {
            return 0;
        }
        double logInc = Math.log(increment);
        double guess = finite(warm) ? warm : Math.max(0, mean - NormalTail.roughUpperQuantile(Math.min(increment, 0.5)));
        double[] p = new double[1];
        return rf.solveNewton(x -> logInc - log(p[0] = h.innerExit(x)), () -> -h.slope() / p[0], guess, 0.5, 0,
                ceiling);
    }

    private static boolean finite(double x) {
        return x > Double.NEGATIVE_INFINITY && x < Double.POSITIVE_INFINITY;
    }

    private static double log(double p) {
        return p > 0 ? Math.log(p) : LOG_ZERO;
    }

    /** theta with P_theta(reject H0 at some look) = power, both sides counted when two-sided. */
    private static double driftForPower(Design design, double[] t, double[] b, RootFinder outer) {
        int sides = design.sides();
        double power = design.power();
        double guess = Normal.upperQuantile(design.alpha() / sides) + Normal.quantile(power);
        return outer.solveDecreasing(theta -> power - rejection(t, b, sides, theta), guess, 0.25, 0, 40);
    }

    /** P_theta(cross an efficacy bound at some look) with efficacy-only continuation regions. */
    private static double rejection(double[] t, double[] b, int sides, double theta) {
        GridRecursion g = new GridRecursion(theta, GridRecursion.DEFAULT_R);
        double p = 0;
        for (int j = 0; j < t.length; j++) {
            g.beginLook(t[j]);
            p += g.upperExit(b[j]) + (sides == 2 ? g.lowerExit(-b[j]) : 0);
            if (j + 1 < t.length) {
                g.endLook(sides, b[j], Double.NaN, t[j + 1]);
            }
        }
        return p;
    }

    // ----------------------------------------------------------------------------------------------
    // Classical designs

    private static BoundarySet classical(Design design, double[] t, RootFinder outer) {
        int k = t.length;
        int sides = design.sides();
        ClassicalShape shape = design.classical();
        double[] b = new double[k];
        double logAlpha = Math.log(design.alpha());
        DoubleUnaryOperator excess = c -> {
            for (int j = 0; j < k; j++) {
                b[j] = c * shape.shape(t[j]);
            }
            return log(rejection(t, b, sides, 0)) - logAlpha;
        };
        double c = outer.solveDecreasing(excess, Normal.upperQuantile(design.alpha() / sides), 0.25, 0, 40);
        excess.applyAsDouble(c);
        double[] lower = new double[k];
        for (int j = 0; j < k; j++) {
            lower[j] = sides == 2 ? -b[j] : Double.NEGATIVE_INFINITY;
        }
        CrossingProbabilities.Result r = CrossingProbabilities.compute(t, lower, b, 0);
        double[] cum = new double[k];
        double s = 0;
        for (int j = 0; j < k; j++) {
            s += r.upper()[j] + r.lower()[j];
            cum[j] = s;
        }
        double theta = design.power() == design.power() ? driftForPower(design, t, b, outer) : Double.NaN;
        return new BoundarySet(design, lookBoundaries(design, t, b, null, cum), theta, t, b, null,
                new BoundarySet.SolverCounts(0, 0, outer.totalEvaluations(), 0));
    }

    /** The classical constant C (C_P or C_B) of a classical design: b_k / s_k. */
    public static double classicalConstant(BoundarySet set) {
        ClassicalShape shape = set.design().classical();
        if (shape == null) {
            throw new StatsException("design %s is not classical", set.design());
        }
        LookBoundary first = set.looks().get(0);
        return first.efficacyZ() / shape.shape(first.informationFraction());
    }

    // ----------------------------------------------------------------------------------------------
    // Shared

    private static double[] increments(SpendingFunction f, double[] t) {
        double[] inc = new double[t.length];
        double previous = 0;
        for (int j = 0; j < t.length; j++) {
            double c = f.cumulative(t[j]);
            inc[j] = c - previous;
            previous = c;
        }
        return inc;
    }

    private static double[] cumulativeSpending(SpendingFunction f, double[] t, int sides) {
        double[] c = new double[t.length];
        for (int j = 0; j < t.length; j++) {
            c[j] = sides * f.cumulative(t[j]);
        }
        return c;
    }

    private static List<LookBoundary> lookBoundaries(Design design, double[] t, double[] b, double[] a, double[] cumAlpha) {
        SpendingFunction beta = design.futilitySpending();
        List<LookBoundary> out = new ArrayList<>(t.length);
        for (int j = 0; j < t.length; j++) {
            double p = design.sides() * NormalTail.upper(b[j]);
            out.add(new LookBoundary(j + 1, t[j], b[j], a == null ? Double.NaN : a[j], cumAlpha[j], p,
                    beta == null ? Double.NaN : beta.cumulative(t[j])));
        }
        return out;
    }

    private static BoundarySet.SolverCounts counts(RootFinder inner, RootFinder outer) {
        return new BoundarySet.SolverCounts(inner.totalEvaluations(), inner.worstSolveEvaluations(),
                outer.totalEvaluations(), 0);
    }

    /**
     * A fixed workload for benchmarks: computes the boundaries of three bookshop-sized designs
     * (K = 5 two-sided O'Brien-Fleming type; K = 10 one-sided with binding Hwang-Shih-DeCani(-2)
     * futility; K = 100 two-sided Pocock type) and returns a checksum so the work cannot be elided.
     */
    public static double benchmarkWorkload() {
        double s = 0;
        s += compute(Design.of(0.05, 2).withEqualLooks(5).withSpending("obrien-fleming")).looks().get(4).efficacyZ();
        s += compute(Design.of(0.025, 1).withEqualLooks(10).withSpending("obrien-fleming")
                .withFutility("hwang-shih-decani:-2", 0.1, true)).drift();
        s += compute(Design.of(0.05, 2).withEqualLooks(100).withSpending("pocock")).looks().get(99).efficacyZ();
        return s;
    }
}
