package dev.stopline.stats.groupseq;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.function.DoubleUnaryOperator;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;

/**
 * The fast drift solve of futility designs (coarse grid, then secant on the full grid with warm-started
 * Newton bound solves) against the slow way: plain bisection for every bound from scratch and for the
 * drift, each drift step a full recursion on the r = 16 grid. Same recursion, same spending equations
 * (Jennison &amp; Turnbull 2000, ch. 7 and 19), different root finding; so the two agree to the solvers'
 * accuracy, and the fast one must stay within 1e-9 on the z scale.
 */
class DriftSolveTest {
    /** Agreement demanded on the z scale and for the drift (the task's accuracy budget). */
    private static final double Z_TOL = 1e-9;
    /** Bisection widths of the reference: far below Z_TOL. */
    private static final double BOUND_WIDTH = 1e-13;
    private static final double DRIFT_WIDTH = 1e-12;

    @ParameterizedTest(name = "{0}-sided {1} binding={2}")
    @CsvSource({
        "1, obrien-fleming, true",
        "1, pocock, false",
        "2, hwang-shih-decani:-2, true",
        "2, power:2, false",
        "2, pocock, true",
    })
    void fastDriftSolve_K10Futility_matchesBisectionReferenceWithin1e9(int sides, String family, boolean binding) {
        Design design = k10(sides, family, binding);
        BoundarySet fast = Boundaries.compute(design);
        Reference slow = Reference.of(design);
        assertClose(slow.theta, fast.drift(), "drift");
        for (int j = 0; j < 10; j++) {
            LookBoundary look = fast.looks().get(j);
            assertClose(slow.b[j], look.efficacyZ(), "efficacy z at look " + (j + 1));
            assertClose(slow.a[j], look.futilityZ(), "futility z at look " + (j + 1));
        }
    }

    @ParameterizedTest(name = "{0}-sided {1} binding={2}")
    @CsvSource({
        "1, obrien-fleming, true", "1, pocock, true", "1, power:2, true", "1, hwang-shih-decani:-2, true",
        "1, obrien-fleming, false", "1, pocock, false", "1, power:2, false", "1, hwang-shih-decani:-2, false",
        "2, obrien-fleming, true", "2, pocock, true", "2, power:2, true", "2, hwang-shih-decani:-2, true",
        "2, obrien-fleming, false", "2, pocock, false", "2, power:2, false", "2, hwang-shih-decani:-2, false",
    })
    void driftSolve_K10Futility_needsTwoFullGridPassesAndBoundedBoundSolves(int sides, String family, boolean binding) {
        BoundarySet.SolverCounts c = Boundaries.compute(k10(sides, family, binding)).solverCounts();
        // Measured on all 16 designs: 2 full-grid passes; 6-9 drift passes in all; at most 24
        // evaluations in one bound solve (a cold inner-futility solve on the coarse grid) and 176-466
        // bound evaluations in all. The previous code needed 6-10 full-grid passes and 459-1230.
        assertEquals(2, c.fineDriftEvaluations(), c.toString());
        assertTrue(c.outerEvaluations() <= 12, c.toString());
        assertTrue(c.worstBoundSolve() <= 25, c.toString());
        assertTrue(c.boundEvaluations() <= 600, c.toString());
    }

    private static Design k10(int sides, String family, boolean binding) {
        // 2.5% one-sided or 5% two-sided, 90% power: common practice.
        return Design.of(sides == 1 ? 0.025 : 0.05, sides).withEqualLooks(10).withSpending(family)
                .withFutility(family, 0.1, binding);
    }

    private static void assertClose(double expected, double actual, String what) {
        if (expected == actual) {
            return; // also equal infinities
        }
        double err = Math.abs(actual - expected);
        assertTrue(err <= Z_TOL, () -> what + ": reference " + expected + " fast " + actual + " error " + err);
    }

    /** The slow way: bisection everywhere, cold starts, every drift step a full r = 16 recursion. */
    private static final class Reference {
        private final Design design;
        private final double[] t;
        private final double[] effInc;
        private final double[] betaInc;
        private final double[] b = new double[10];
        private final double[] a = new double[10];
        private double theta;

        private Reference(Design design) {
            this.design = design;
            this.t = design.looks();
            this.effInc = increments(design.efficacySpending(), t);
            this.betaInc = increments(design.futilitySpending(), t);
        }

        static Reference of(Design design) {
            Reference r = new Reference(design);
            // gap(theta) = b_K - a_K decreases in theta; the drift of these designs lies in (2, 6).
            double lo = 2;
            double hi = 6;
            while (hi - lo > DRIFT_WIDTH) {
                double mid = 0.5 * (lo + hi);
                if (r.gap(mid) > 0) {
                    lo = mid;
                } else {
                    hi = mid;
                }
            }
            r.theta = 0.5 * (lo + hi);
            r.gap(r.theta);
            r.a[9] = r.b[9];
            return r;
        }

        private double gap(double drift) {
            int sides = design.sides();
            boolean binding = design.bindingFutility();
            GridRecursion h0 = new GridRecursion(0, GridRecursion.DEFAULT_R);
            GridRecursion h1 = new GridRecursion(drift, GridRecursion.DEFAULT_R);
            for (int j = 0; j < 10; j++) {
                h0.beginLook(t[j]);
                double inc = effInc[j];
                b[j] = inc > 1e-300 ? bisect(x -> h0.upperExit(x) - inc, -10, 40) : Double.POSITIVE_INFINITY;
                h1.beginLook(t[j]);
                double ceiling = j == 9 ? b[j] + 20 : b[j];
                double beta = betaInc[j];
                double mean = drift * Math.sqrt(t[j]);
                if (!(beta > 1e-300)) {
                    a[j] = sides == 1 ? Double.NEGATIVE_INFINITY : 0;
                } else if (sides == 1) {
                    a[j] = bisect(x -> beta - h1.lowerExit(x), mean - 40, ceiling);
                } else {
                    a[j] = bisect(x -> beta - h1.innerExit(x), 0, ceiling);
                }
                if (j < 9) {
                    h0.endLook(sides, b[j], binding ? a[j] : Double.NaN, t[j + 1]);
                    h1.endLook(sides, b[j], a[j], t[j + 1]);
                }
            }
            return b[9] - a[9];
        }

        /** Root of a decreasing f on [lo, hi]; a limit when the root lies beyond it. */
        private static double bisect(DoubleUnaryOperator f, double lo, double hi) {
            if (f.applyAsDouble(hi) > 0) {
                return hi;
            }
            if (f.applyAsDouble(lo) < 0) {
                return lo;
            }
            while (hi - lo > BOUND_WIDTH * Math.max(1, Math.abs(lo))) {
                double mid = 0.5 * (lo + hi);
                if (f.applyAsDouble(mid) > 0) {
                    lo = mid;
                } else {
                    hi = mid;
                }
            }
            return 0.5 * (lo + hi);
        }

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
    }
}
