package dev.stopline.stats.groupseq;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.stats.StatsException;
import java.util.SplittableRandom;
import org.apache.commons.math3.analysis.UnivariateFunction;
import org.apache.commons.math3.analysis.integration.gauss.GaussIntegratorFactory;
import org.apache.commons.math3.distribution.NormalDistribution;
import org.junit.jupiter.api.Test;

class CrossingProbabilitiesTest {
    private static final NormalDistribution STD = new NormalDistribution(0, 1);
    private static final double INF = Double.POSITIVE_INFINITY;

    private static void assertClose(double expected, double actual, double tol, String what) {
        double err = Math.abs(actual - expected);
        assertTrue(err <= tol, () -> what + ": expected " + expected + " got " + actual + " error " + err + " > " + tol);
    }

    @Test
    void singleLook_isTheNormalTailAtTheShiftedMean() {
        CrossingProbabilities.Result r = CrossingProbabilities.compute(new double[] {0.64}, new double[] {-1.2},
                new double[] {2.1}, 1.5);
        double mu = 1.5 * 0.8; // theta sqrt(t)
        // Commons Math NormalDistribution; Hart/West tails are accurate to ~1e-15 absolute here.
        assertClose(1 - STD.cumulativeProbability(2.1 - mu), r.upper()[0], 1e-14, "upper");
        assertClose(STD.cumulativeProbability(-1.2 - mu), r.lower()[0], 1e-14, "lower");
    }

    @Test
    void twoLooks_agreeWithAnIndependentGaussLegendreIntegralOfTheBivariateNormal() {
        double t1 = 0.4;
        double b1 = 2.5;
        double b2 = 2.0;
        double theta = 1.0;
        CrossingProbabilities.Result r = CrossingProbabilities.compute(new double[] {t1, 1}, new double[] {-INF, -INF},
                new double[] {b1, b2}, theta);
        // P(Z1 < b1, Z2 > b2): Z2 = sqrt(t1) Z1 + sqrt(1 - t1) W + theta (1 - t1) / 1, W ~ N(0,1) independent;
        // integrate over z1 with Commons Math Gauss-Legendre (independent of the recursion's grid and Simpson rule).
        double mu1 = theta * Math.sqrt(t1);
        UnivariateFunction integrand = z1 -> STD.density(z1 - mu1)
                * (1 - STD.cumulativeProbability((b2 - Math.sqrt(t1) * z1 - theta * (1 - t1)) / Math.sqrt(1 - t1)));
        // Composite 10-point Gauss-Legendre on 400 panels of mu1 - 15 .. b1 (panel width < 0.05).
        double lo = mu1 - 15;
        int panels = 400;
        double width = (b1 - lo) / panels;
        double expected = 0;
        GaussIntegratorFactory gauss = new GaussIntegratorFactory();
        for (int i = 0; i < panels; i++) {
            expected += gauss.legendre(10, lo + i * width, lo + (i + 1) * width).integrate(integrand);
        }
        // J&T (2000, ch. 19) report errors near 1e-6 with r = 16; we ask 1e-7 absolute.
        assertClose(expected, r.upper()[1], 1e-7, "second-look upper exit");
        assertClose(1 - STD.cumulativeProbability(b1 - mu1), r.upper()[0], 1e-14, "first-look upper exit");
    }

    @Test
    void pocockTwoLookConstant_fromJennisonTurnbullTable21_givesTwoSidedLevelFivePercent() {
        double c = 2.178; // Jennison & Turnbull (2000) Table 2.1, K = 2, alpha = 0.05, from memory
        CrossingProbabilities.Result r = CrossingProbabilities.compute(new double[] {0.5, 1}, new double[] {-c, -c},
                new double[] {c, c}, 0);
        // d(level)/dC ~ 0.15 here, so the table's rounding (+-0.0005 on C) allows +-0.0001 on the level.
        assertClose(0.05, r.totalUpper() + r.totalLower(), 1e-4, "two-sided level");
        assertClose(r.totalUpper(), r.totalLower(), 1e-12, "symmetry under theta = 0");
    }

    @Test
    void finerGrid_changesProbabilitiesByLessThan2e7() {
        double[] t = {0.1, 0.25, 0.5, 0.7, 1};
        double[] lo = {-1.5, -0.5, 0.3, 1.0, 1.9};
        double[] hi = {4.0, 3.2, 2.6, 2.3, 2.0};
        for (double theta : new double[] {0, 2.5}) {
            double[][] coarse = run(t, lo, hi, theta, GridRecursion.DEFAULT_R);
            double[][] fine = run(t, lo, hi, theta, 64);
            for (int k = 0; k < t.length; k++) {
                // Self-convergence: r = 16 against r = 64. The Simpson error of the J&T grid scales as r^-4 and
                // comes from the log-spaced tails (measured: integral of h_1 = 1 + 3.6e-7 at r = 16, 1 + 1.4e-9
                // at r = 64); J&T (2000, sec. 19.2) quote ~1e-6 as the working accuracy.
                assertClose(fine[0][k], coarse[0][k], 2e-7, "upper look " + (k + 1) + " theta " + theta);
                assertClose(fine[1][k], coarse[1][k], 2e-7, "lower look " + (k + 1) + " theta " + theta);
            }
        }
    }

    private static double[][] run(double[] t, double[] lo, double[] hi, double theta, int r) {
        GridRecursion g = new GridRecursion(theta, r);
        double[][] out = new double[2][t.length];
        for (int k = 0; k < t.length; k++) {
            g.beginLook(t[k]);
            out[0][k] = g.upperExit(hi[k]);
            out[1][k] = g.lowerExit(lo[k]);
            g.endLook(lo[k], hi[k], Double.NaN, Double.NaN, k + 1 < t.length ? t[k + 1] : Double.NaN);
        }
        return out;
    }

    @Test
    void integration_agreesWithSeededMonteCarloOfBrownianMotionWithin3StandardErrors() {
        double[] t = {0.2, 0.45, 0.7, 1};
        double[] lo = {-INF, -0.2, 0.6, 1.95};
        double[] hi = {3.2, 2.6, 2.3, 1.95};
        for (double theta : new double[] {0, 2.8}) {
            CrossingProbabilities.Result r = CrossingProbabilities.compute(t, lo, hi, theta);
            double[][] mc = monteCarlo(t, lo, hi, theta, 200_000, 20261201L);
            int n = 200_000;
            for (int k = 0; k < t.length; k++) {
                double se = Math.sqrt(Math.max(mc[0][k] * (1 - mc[0][k]), 1.0 / n) / n);
                assertClose(mc[0][k], r.upper()[k], 3 * se, "upper look " + (k + 1) + " theta " + theta);
                se = Math.sqrt(Math.max(mc[1][k] * (1 - mc[1][k]), 1.0 / n) / n);
                assertClose(mc[1][k], r.lower()[k], 3 * se, "lower look " + (k + 1) + " theta " + theta);
            }
            double total = r.totalUpper();
            double mcTotal = sum(mc[0]);
            assertClose(mcTotal, total, 3 * Math.sqrt(mcTotal * (1 - mcTotal) / n), "total upper theta " + theta);
        }
    }

    @Test
    void looksCloseTogether_refineTheGridAndStillAgreeWithSeededMonteCarlo() {
        // Regression: with the fixed r = 16 grid, increments of 1e-6 gave "probabilities" above 1.
        double[] t = {0.5, 0.5001, 0.5003, 1};
        double[] lo = {-INF, -INF, -INF, -INF};
        double[] hi = {2.2, 2.2, 2.2, 2.0};
        CrossingProbabilities.Result r = CrossingProbabilities.compute(t, lo, hi, 0.5);
        int n = 200_000;
        double[][] mc = monteCarlo(t, lo, hi, 0.5, n, 4242L);
        for (int k = 0; k < t.length; k++) {
            double se = Math.sqrt(Math.max(mc[0][k] * (1 - mc[0][k]), 1.0 / n) / n);
            assertClose(mc[0][k], r.upper()[k], 3 * se, "upper look " + (k + 1));
        }
        assertTrue(r.totalUpper() < 1);
    }

    @Test
    void looksTooCloseForTheGrid_failWithTheRule() {
        StatsException e = assertThrows(StatsException.class, () -> CrossingProbabilities.compute(
                new double[] {0.5, 0.500001, 1}, new double[] {-INF, -INF, -INF}, new double[] {2, 2, 2}, 0));
        assertTrue(e.getMessage().contains("too close together") && e.getMessage().contains("increments must be at least"),
                e.getMessage());
    }

    static double[][] monteCarlo(double[] t, double[] lo, double[] hi, double theta, int n, long seed) {
        SplittableRandom rnd = new SplittableRandom(seed);
        double[][] count = new double[2][t.length];
        for (int p = 0; p < n; p++) {
            double s = 0;
            double tPrev = 0;
            for (int k = 0; k < t.length; k++) {
                double d = t[k] - tPrev;
                s += theta * d + Math.sqrt(d) * gaussian(rnd);
                tPrev = t[k];
                double z = s / Math.sqrt(t[k]);
                if (z > hi[k]) {
                    count[0][k]++;
                    break;
                }
                if (z < lo[k]) {
                    count[1][k]++;
                    break;
                }
            }
        }
        for (int k = 0; k < t.length; k++) {
            count[0][k] /= n;
            count[1][k] /= n;
        }
        return count;
    }

    /** Marsaglia polar method on a seeded SplittableRandom. */
    static double gaussian(SplittableRandom rnd) {
        while (true) {
            double u = 2 * rnd.nextDouble() - 1;
            double v = 2 * rnd.nextDouble() - 1;
            double s = u * u + v * v;
            if (s > 0 && s < 1) {
                return u * Math.sqrt(-2 * Math.log(s) / s);
            }
        }
    }

    private static double sum(double[] x) {
        double s = 0;
        for (double v : x) {
            s += v;
        }
        return s;
    }

    @Test
    void infiniteBounds_neverExitAndPassAllMassOn() {
        CrossingProbabilities.Result r = CrossingProbabilities.compute(new double[] {0.3, 0.6, 1},
                new double[] {-INF, -INF, -INF}, new double[] {INF, INF, 0}, 0.0);
        assertEquals(0.0, r.upper()[0]);
        assertEquals(0.0, r.lower()[1]);
        // With no stopping before, P(Z_3 > 0) = 1/2 under theta = 0 (symmetry). The Simpson error of the
        // r = 16 grid on the tails adds 3.6e-7 of mass per look (measured; scales as r^-4): J&T's ~1e-6.
        assertClose(0.5, r.upper()[2], 1e-6, "P(Z_3 > 0)");
    }

    @Test
    void emptyContinuationRegion_stopsEverythingAtThatLook() {
        CrossingProbabilities.Result r = CrossingProbabilities.compute(new double[] {0.5, 1},
                new double[] {1, -INF}, new double[] {1, INF}, 0.3);
        assertClose(1.0, r.upper()[0] + r.lower()[0], 1e-15, "all mass exits at look 1");
        assertEquals(0.0, r.upper()[1] + r.lower()[1], "nothing left for look 2");
    }

    @Test
    void badArguments_failWithTheRule() {
        double[] one = {1};
        assertMessage("number of looks must be >= 1", () -> CrossingProbabilities.compute(new double[0], new double[0], new double[0], 0));
        assertMessage("strictly increasing", () -> CrossingProbabilities.compute(new double[] {0.5, 0.5}, new double[2], new double[2], 0));
        assertMessage("strictly increasing", () -> CrossingProbabilities.compute(new double[] {Double.NaN}, one, one, 0));
        assertMessage("> 0", () -> CrossingProbabilities.compute(new double[] {0}, one, one, 0));
        assertMessage("same length", () -> CrossingProbabilities.compute(new double[] {0.5, 1}, one, one, 0));
        assertMessage("lower <= upper", () -> CrossingProbabilities.compute(one, new double[] {2}, one, 0));
        assertMessage("lower <= upper", () -> CrossingProbabilities.compute(one, new double[] {Double.NaN}, one, 0));
        assertMessage("must be finite", () -> CrossingProbabilities.compute(one, one, one, Double.NaN));
    }

    private static void assertMessage(String part, org.junit.jupiter.api.function.Executable call) {
        StatsException e = assertThrows(StatsException.class, call);
        assertTrue(e.getMessage().contains(part), () -> "message '" + e.getMessage() + "' lacks '" + part + "'");
    }

    @Test
    void result_isImmutable() {
        CrossingProbabilities.Result r = CrossingProbabilities.compute(new double[] {1}, new double[] {-1}, new double[] {1}, 0);
        r.upper()[0] = 7;
        assertTrue(r.upper()[0] < 1);
    }
}
