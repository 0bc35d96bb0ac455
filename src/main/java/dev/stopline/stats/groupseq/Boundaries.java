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
 * <p>Effort: per look one O(m^2) density update (m &lt;= 193) per recursion and a bounded Brent
 * solve of O(m) evaluations; the root-finder budgets are explicit constants below.
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
        // b_K - a_K decreases in theta: a larger drift pushes the futility bounds up.
        // Every evaluation's bounds are kept, so the root's bounds need no extra pass (saves 1 of ~7).
        List<double[][]> evaluated = new ArrayList<>();
        DoubleUnaryOperator gap = theta -> {
            pass(t, sides, effInc, betaInc, binding, theta, b, a, binding, inner);
            evaluated.add(new double[][] {{theta}, b.clone(), a.clone()});
            return b[k - 1] - a[k - 1];
        };
        double fixed = Normal.upperQuantile(design.alpha() / sides) + Normal.upperQuantile(design.beta());
        double theta = outer.solveDecreasing(gap, fixed * 1.05, 0.05 * fixed, 1e-3, 40);
        double[][] atRoot = evaluated.stream().filter(e -> e[0][0] == theta).findFirst().orElse(null);
        if (atRoot == null) {
            gap.applyAsDouble(theta);
        } else {
            System.arraycopy(atRoot[1], 0, b, 0, k);
            System.arraycopy(atRoot[2], 0, a, 0, k);
        }
        a[k - 1] = b[k - 1];
        return new BoundarySet(design, lookBoundaries(design, t, b, a, cumAlpha), theta, t, b, a, counts(inner, outer));
    }

    /**
     * One forward pass over the looks. Solves b (when {@code solveEfficacy}) under theta = 0 and a
     * (when {@code betaInc != null}) under {@code theta}. The H0 recursion stops at futility only when
     * {@code binding}. The last futility bound is left unclamped (the caller compares it with b_K).
     */
    private static void pass(double[] t, int sides, double[] effInc, double[] betaInc, boolean binding, double theta,
                             double[] b, double[] a, boolean solveEfficacy, RootFinder rf) {
        int k = t.length;
        boolean futility = betaInc != null;
        GridRecursion h0 = solveEfficacy ? new GridRecursion(0, GridRecursion.DEFAULT_R) : null;
        GridRecursion h1 = futility ? new GridRecursion(theta, GridRecursion.DEFAULT_R) : null;
        for (int j = 0; j < k; j++) {
            if (h0 != null) {
                h0.beginLook(t[j]);
                b[j] = efficacyBound(h0, effInc[j], rf);
            }
            if (futility) {
                h1.beginLook(t[j]);
                double ceiling = j == k - 1 ? b[j] + 20 : b[j];
                a[j] = sides == 1 ? futilityBelow(h1, betaInc[j], theta * Math.sqrt(t[j]), ceiling, rf)
                        : futilityInner(h1, betaInc[j], theta * Math.sqrt(t[j]), ceiling, rf);
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

    private static double efficacyBound(GridRecursion h, double increment, RootFinder rf) {
        if (!(increment > NEGLIGIBLE)) {
            return Double.POSITIVE_INFINITY;
        }
        double logInc = Math.log(increment);
        // Under theta = 0, P(continue, Z_k > b) <= 1 - Phi(b): the root lies about at or below this guess.
        double guess = NormalTail.roughUpperQuantile(Math.min(increment, 0.5));
        return rf.solveDecreasing(x -> log(h.upperExit(x)) - logInc, guess, 0.5, -10, 40);
    }

    private static double futilityBelow(GridRecursion h, double increment, double mean, double ceiling, RootFinder rf) {
        if (!(increment > NEGLIGIBLE)) {
            return Double.NEGATIVE_INFINITY;
        }
        double logInc = Math.log(increment);
        // P(continue, Z_k < a) <= Phi(a - mean): the root lies about at or above this guess.
        double guess = mean - NormalTail.roughUpperQuantile(Math.min(increment, 0.5));
        return rf.solveDecreasing(x -> logInc - log(h.lowerExit(x)), guess, 0.5, mean - 40, ceiling);
    }

    private static double futilityInner(GridRecursion h, double increment, double mean, double ceiling, RootFinder rf) {
        if (!(increment > NEGLIGIBLE)) {
            return 0;
        }
        double logInc = Math.log(increment);
        double guess = Math.max(0, mean - NormalTail.roughUpperQuantile(Math.min(increment, 0.5)));
        return rf.solveDecreasing(x -> logInc - log(h.innerExit(x)), guess, 0.5, 0, ceiling);
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
                new BoundarySet.SolverCounts(0, 0, outer.totalEvaluations()));
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
                outer.totalEvaluations());
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
