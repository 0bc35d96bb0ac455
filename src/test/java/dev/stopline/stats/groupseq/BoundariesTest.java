package dev.stopline.stats.groupseq;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.stats.Normal;
import dev.stopline.stats.StatsException;
import java.util.Arrays;
import java.util.List;
import java.util.SplittableRandom;
import org.apache.commons.math3.distribution.NormalDistribution;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.function.Executable;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;

class BoundariesTest {
    private static final NormalDistribution STD = new NormalDistribution(0, 1);
    /** Published tables give 3 decimals: +-0.0005 rounding, plus 1e-5 for our own numerical error. */
    private static final double TABLE_3DP = 0.0005 + 1e-5;

    private static void assertClose(double expected, double actual, double tol, String what) {
        double err = Math.abs(actual - expected);
        assertTrue(err <= tol, () -> what + ": expected " + expected + " got " + actual + " error " + err + " > " + tol);
    }

    private static double[] efficacy(BoundarySet s) {
        return s.looks().stream().mapToDouble(LookBoundary::efficacyZ).toArray();
    }

    private static double[] futility(BoundarySet s) {
        return s.looks().stream().mapToDouble(LookBoundary::futilityZ).toArray();
    }

    // ---------------------------------------------------------------------------------- published values

    @ParameterizedTest(name = "K={0} alpha={1}: C_P={2}, C_B={3}")
    @CsvSource({
        // Jennison & Turnbull (2000) Table 2.1 (Pocock C_P) and Table 2.3 (O'Brien-Fleming C_B),
        // two-sided, equally spaced looks. K = 2..5 and K = 10 at 0.05 as given in the brief, the rest
        // from memory. K = 1 is the fixed-sample z_{1-alpha/2} (Commons Math: 1.960, 2.576).
        "1, 0.05, 1.960, 1.960",
        "2, 0.05, 2.178, 1.977",
        "3, 0.05, 2.289, 2.004",
        "4, 0.05, 2.361, 2.024",
        "5, 0.05, 2.413, 2.040",
        "6, 0.05, 2.453, 2.053",
        "7, 0.05, 2.485, 2.063",
        "8, 0.05, 2.512, 2.072",
        "9, 0.05, 2.535, 2.080",
        "10, 0.05, 2.555, 2.087",
        "1, 0.01, 2.576, 2.576",
        "2, 0.01, 2.772, 2.580",
        "3, 0.01, 2.873, 2.595",
        "4, 0.01, 2.939, 2.609",
        "5, 0.01, 2.986, 2.621",
        "6, 0.01, 3.023, 2.631",
        "7, 0.01, 3.053, 2.640",
        "8, 0.01, 3.078, 2.648",
        "9, 0.01, 3.099, 2.654",
        "10, 0.01, 3.117, 2.660",
    })
    void classicalConstants_matchJennisonTurnbullTables21And23(int k, double alpha, double cp, double cb) {
        BoundarySet pocock = Boundaries.compute(Design.of(alpha, 2).withEqualLooks(k).withClassical(ClassicalShape.POCOCK));
        BoundarySet obf = Boundaries.compute(Design.of(alpha, 2).withEqualLooks(k).withClassical(ClassicalShape.OBRIEN_FLEMING));
        assertClose(cp, Boundaries.classicalConstant(pocock), TABLE_3DP, "C_P(" + k + ", " + alpha + ")");
        assertClose(cb, Boundaries.classicalConstant(obf), TABLE_3DP, "C_B(" + k + ", " + alpha + ")");
        // O'Brien & Fleming (1979): c_k = C_B sqrt(K / k)
        double[] b = efficacy(obf);
        for (int j = 1; j <= k; j++) {
            assertClose(Boundaries.classicalConstant(obf) * Math.sqrt((double) k / j), b[j - 1], 1e-12, "OBF shape look " + j);
        }
        // The level is spent exactly: the classical constant is solved for it.
        assertClose(alpha, pocock.looks().get(k - 1).cumulativeAlphaSpent(), 1e-9, "Pocock total alpha");
    }

    @Test
    void boundary_singleLook_equalsFixedTwoSidedCriticalValue() {
        // 95% confidence, two-sided 0.05: 1.960 (common practice); exact value from Commons Math.
        for (String spec : List.of("obrien-fleming", "pocock", "hwang-shih-decani:-4", "power:3")) {
            double b = Boundaries.compute(Design.of(0.05, 2).withSpending(spec)).looks().get(0).efficacyZ();
            assertClose(1.960, b, 0.0005, spec + " rounded");
            assertClose(STD.inverseCumulativeProbability(0.975), b, 1e-9, spec + " exact");
        }
    }

    @Test
    void lanDeMetsObrienFlemingType_fiveEqualLooksTwoSided005_matchPublishedBounds() {
        // Lan & DeMets (1983) O'Brien-Fleming-type spending, K = 5 equally spaced, two-sided 0.05;
        // widely published, from memory; 1e-3 tolerance for the tables' rounding.
        double[] expected = {4.877, 3.357, 2.680, 2.290, 2.031};
        double[] b = efficacy(Boundaries.compute(Design.of(0.05, 2).withEqualLooks(5).withSpending("obrien-fleming")));
        for (int j = 0; j < 5; j++) {
            assertClose(expected[j], b[j], 1e-3, "look " + (j + 1));
        }
    }

    // ---------------------------------------------------------------------------------- cross-checks

    @Test
    void crossingProbabilities_integrateBackToTheAlphaSpent_allFamiliesRandomLooksUpTo100() {
        SplittableRandom rnd = new SplittableRandom(424242L);
        double worst = 0;
        for (int k : new int[] {1, 2, 3, 5, 8, 13, 25, 50, 100}) {
            for (String spec : List.of("obrien-fleming", "pocock", "hwang-shih-decani:-4", "power:3")) {
                for (int sides = 1; sides <= 2; sides++) {
                    double[] t = randomLooks(rnd, k);
                    Design d = Design.of(0.05, sides).withLooks(t).withSpending(spec);
                    double[] b = efficacy(Boundaries.compute(d));
                    double[] lo = new double[k];
                    for (int j = 0; j < k; j++) {
                        lo[j] = sides == 2 ? -b[j] : Double.NEGATIVE_INFINITY;
                    }
                    CrossingProbabilities.Result r = CrossingProbabilities.compute(t, lo, b, 0);
                    SpendingFunction f = d.efficacySpending();
                    double cum = 0;
                    for (int j = 0; j < k; j++) {
                        cum += r.upper()[j] + r.lower()[j];
                        double spent = sides * f.cumulative(t[j]);
                        if (spent == 0) {
                            assertEquals(0.0, cum, "nothing spent, nothing crossed at look " + (j + 1));
                            continue;
                        }
                        double rel = Math.abs(cum - spent) / spent;
                        worst = Math.max(worst, rel);
                        String what = spec + " sides " + sides + " K " + k + " look " + (j + 1) + " t " + t[j];
                        assertTrue(rel < 1e-6, () -> what + ": spent " + spent + " crossed " + Arrays.toString(r.upper())
                                + " relative error " + rel);
                    }
                }
            }
        }
        assertTrue(worst < 1e-6, "worst relative error " + worst);
    }

    static double[] randomLooks(SplittableRandom rnd, int k) {
        double[] t = new double[k];
        double[] u = new double[k - 1];
        for (int j = 0; j < k - 1; j++) {
            u[j] = 0.02 + 0.96 * rnd.nextDouble();
        }
        Arrays.sort(u);
        for (int j = 0; j < k - 1; j++) {
            t[j] = u[j];
            if (j > 0 && !(t[j] > t[j - 1])) {
                t[j] = Math.nextUp(t[j - 1]) + 1e-9;
            }
        }
        t[k - 1] = 1;
        return t;
    }

    @Test
    void bindingFutilityDesign_agreesWithSeededMonteCarloAtThetaZeroAndAtTheDesignDrift() {
        BoundarySet s = Boundaries.compute(Design.of(0.025, 1).withLooks(0.25, 0.5, 0.75, 1)
                .withSpending("hwang-shih-decani:-4").withFutility("hwang-shih-decani:-2", 0.1, true));
        double[] t = s.design().looks();
        double[] a = futility(s);
        double[] b = efficacy(s);
        int n = 200_000;
        for (double theta : new double[] {0, s.drift()}) {
            CrossingProbabilities.Result r = CrossingProbabilities.compute(t, a, b, theta);
            double[][] mc = CrossingProbabilitiesTest.monteCarlo(t, a, b, theta, n, 77L);
            for (int j = 0; j < t.length; j++) {
                assertWithin3Se(mc[0][j], r.upper()[j], n, "efficacy look " + (j + 1) + " theta " + theta);
                assertWithin3Se(mc[1][j], r.lower()[j], n, "futility look " + (j + 1) + " theta " + theta);
            }
            double mcTotal = Arrays.stream(mc[0]).sum();
            assertWithin3Se(mcTotal, r.totalUpper(), n, "total efficacy theta " + theta);
        }
        // Under H0 (binding) the type I error is alpha; at the drift the power is 1 - beta (J&T 2000 sec. 7.2).
        assertClose(0.025, CrossingProbabilities.compute(t, a, b, 0).totalUpper(), 1e-8, "type I error");
        assertClose(0.9, CrossingProbabilities.compute(t, a, b, s.drift()).totalUpper(), 1e-7, "power");
        double[] betaSpent = s.looks().stream().mapToDouble(LookBoundary::cumulativeBetaSpent).toArray();
        double[] lowerAtDrift = CrossingProbabilities.compute(t, a, b, s.drift()).lower();
        double cum = 0;
        for (int j = 0; j < t.length; j++) {
            cum += lowerAtDrift[j];
            assertClose(betaSpent[j], cum, 1e-7, "beta spent by look " + (j + 1));
        }
    }

    private static void assertWithin3Se(double mc, double exact, int n, String what) {
        double se = Math.sqrt(Math.max(mc * (1 - mc), 1.0 / n) / n);
        assertClose(mc, exact, 3 * se, what + " (3 standard errors of " + n + " paths)");
    }

    @Test
    void twoSidedInnerFutility_agreesWithSeededMonteCarlo() {
        BoundarySet s = Boundaries.compute(Design.of(0.05, 2).withEqualLooks(4)
                .withSpending("obrien-fleming").withFutility("pocock", 0.2, true));
        double[] t = s.design().looks();
        double[] a = futility(s);
        double[] b = efficacy(s);
        int n = 200_000;
        for (double theta : new double[] {0, s.drift()}) {
            SplittableRandom rnd = new SplittableRandom(99L);
            double[] reject = new double[t.length];
            double[] futile = new double[t.length];
            for (int p = 0; p < n; p++) {
                double score = 0;
                double prev = 0;
                for (int j = 0; j < t.length; j++) {
                    score += theta * (t[j] - prev) + Math.sqrt(t[j] - prev) * CrossingProbabilitiesTest.gaussian(rnd);
                    prev = t[j];
                    double z = score / Math.sqrt(t[j]);
                    if (Math.abs(z) >= b[j]) {
                        reject[j]++;
                        break;
                    }
                    if (Math.abs(z) <= a[j]) {
                        futile[j]++;
                        break;
                    }
                }
            }
            double totalReject = Arrays.stream(reject).sum() / n;
            // H0: level 0.05 (binding futility only lowers it, by design it is spent exactly);
            // at the drift: power 0.8 counting rejections on either side.
            double expected = theta == 0 ? 0.05 : 0.8;
            assertWithin3Se(totalReject, expected, n, "rejection rate theta " + theta);
            if (theta > 0) {
                double cumFutile = 0;
                for (int j = 0; j < t.length; j++) {
                    cumFutile += futile[j] / n;
                    assertWithin3Se(cumFutile, s.looks().get(j).cumulativeBetaSpent(), n, "beta spent by look " + (j + 1));
                }
            }
        }
    }

    @Test
    void expectedInformation_agreesWithSeededMonteCarlo() {
        BoundarySet s = Boundaries.compute(Design.of(0.025, 1).withEqualLooks(5).withFutility("obrien-fleming", 0.1, false));
        assertTrue(s.nonBindingFutility());
        double[] t = s.design().looks();
        double[] a = futility(s);
        double[] b = efficacy(s);
        int n = 100_000;
        for (double theta : new double[] {0, s.drift()}) {
            SplittableRandom rnd = new SplittableRandom(5L);
            double sum = 0;
            double sumSq = 0;
            for (int p = 0; p < n; p++) {
                double score = 0;
                double prev = 0;
                double stop = 1;
                for (int j = 0; j < t.length; j++) {
                    score += theta * (t[j] - prev) + Math.sqrt(t[j] - prev) * CrossingProbabilitiesTest.gaussian(rnd);
                    prev = t[j];
                    double z = score / Math.sqrt(t[j]);
                    if (z >= b[j] || z <= a[j]) {
                        stop = t[j];
                        break;
                    }
                }
                sum += stop;
                sumSq += stop * stop;
            }
            double mean = sum / n;
            double se = Math.sqrt((sumSq / n - mean * mean) / n);
            assertClose(mean, s.expectedInformationFraction(theta), 3 * se, "E[t] theta " + theta + " (3 SE)");
        }
    }

    @Test
    void singleLookWithPower_givesTheFixedSampleDriftAndInflationOne() {
        // Fixed-sample z-test: theta = z_{0.975} + z_{0.8} = 1.95996 + 0.84162 (Commons Math), R = 1.
        double fixed = STD.inverseCumulativeProbability(0.975) + STD.inverseCumulativeProbability(0.8);
        BoundarySet s = Boundaries.compute(Design.of(0.05, 2).withPower(0.8));
        // Two-sided power also counts the far side, which adds Phi(-1.96 - 2.80) = 1e-6 of power.
        assertClose(fixed, s.drift(), 1e-4, "drift");
        BoundarySet f = Boundaries.compute(Design.of(0.025, 1).withFutility("pocock", 0.2, true));
        assertClose(fixed, f.drift(), 1e-8, "drift of one look with futility");
        assertClose(1.0, f.inflationFactor(), 1e-8, "inflation factor");
        assertClose(1.0, f.expectedInformationFraction(1.3), 0, "one look always uses all information");
    }

    @Test
    void driftWithoutFutility_givesTheRequestedPower() {
        BoundarySet s = Boundaries.compute(Design.of(0.05, 2).withEqualLooks(5).withSpending("obrien-fleming").withPower(0.9));
        double[] b = efficacy(s);
        double[] lo = Arrays.stream(b).map(x -> -x).toArray();
        CrossingProbabilities.Result r = CrossingProbabilities.compute(s.design().looks(), lo, b, s.drift());
        assertClose(0.9, r.totalUpper() + r.totalLower(), 1e-9, "power at drift");
        // Jennison & Turnbull (2000) Table 2.4/2.6 style: OBF-type K = 5 inflates information by a few
        // percent; from memory R(5, 0.05, 0.9) for classical OBF is 1.026, spending OBF is close to it.
        assertClose(1.026, s.inflationFactor(), 0.01, "inflation factor, from memory, loose");
        assertTrue(Double.isNaN(Boundaries.compute(Design.of(0.05, 2).withEqualLooks(3)).drift()), "no power, no drift");
    }

    @Test
    void nonBindingFutility_leavesEfficacyAsWithoutFutility_bindingLowersIt() {
        Design base = Design.of(0.025, 1).withEqualLooks(4).withSpending("obrien-fleming");
        double[] none = efficacy(Boundaries.compute(base));
        BoundarySet nonBinding = Boundaries.compute(base.withFutility("hwang-shih-decani:-2", 0.15, false));
        BoundarySet binding = Boundaries.compute(base.withFutility("hwang-shih-decani:-2", 0.15, true));
        assertTrue(nonBinding.nonBindingFutility());
        assertFalse(binding.nonBindingFutility());
        double[] nb = efficacy(nonBinding);
        double[] bi = efficacy(binding);
        for (int j = 0; j < 3; j++) {
            assertEquals(none[j], nb[j], 0, "non-binding look " + (j + 1));
        }
        // Binding futility removes H0 paths, so later efficacy bounds may come down (J&T 2000 sec. 7.2).
        assertTrue(bi[3] < none[3], "binding last bound " + bi[3] + " vs " + none[3]);
        assertEquals(nb[3], futility(nonBinding)[3], 0, "futility meets efficacy at the last look");
    }

    // ---------------------------------------------------------------------------------- flexible looks

    @Test
    void flexibleLooks_atThePlannedFractions_reproduceThePlannedBoundaries() {
        Design d = Design.of(0.025, 1).withLooks(0.3, 0.6, 1).withFutility("pocock", 0.1, true);
        BoundarySet planned = Boundaries.compute(d);
        List<LookBoundary> flexible = Boundaries.flexible(d, d.looks());
        for (int j = 0; j < 3; j++) {
            assertClose(planned.looks().get(j).efficacyZ(), flexible.get(j).efficacyZ(), 1e-9, "efficacy " + (j + 1));
            assertClose(planned.looks().get(j).futilityZ(), flexible.get(j).futilityZ(), 1e-9, "futility " + (j + 1));
        }
    }

    @Test
    void flexibleLooks_unplannedAndOverrunLooks_spendExactlyTheSpendingFunctionAndThenAllThatRemains() {
        Design d = Design.of(0.05, 2).withEqualLooks(4).withSpending("obrien-fleming");
        double[] reached = {0.2, 0.45, 0.8, 1.12};
        LookBoundary current = Boundaries.next(d, reached);
        double[] b = Boundaries.flexible(d, reached).stream().mapToDouble(LookBoundary::efficacyZ).toArray();
        assertEquals(current.efficacyZ(), b[3], 0);
        assertEquals(0.05, current.cumulativeAlphaSpent(), 0, "final look spends the rest");
        CrossingProbabilities.Result r = CrossingProbabilities.compute(reached, Arrays.stream(b).map(x -> -x).toArray(), b, 0);
        SpendingFunction f = d.efficacySpending();
        // Lan & DeMets (1983): alpha(t_k) - alpha(t_{k-1}) at each look actually reached.
        assertClose(2 * (f.cumulative(0.45) - f.cumulative(0.2)), r.upper()[1] + r.lower()[1], 1e-10, "look 2 spends");
        assertClose(0.05, r.totalUpper() + r.totalLower(), 1e-9, "total level with an overrun look");
    }

    @Test
    void flexibleLooks_finalLookFutilityEqualsEfficacy() {
        Design d = Design.of(0.025, 1).withEqualLooks(3).withFutility("obrien-fleming", 0.2, false);
        LookBoundary last = Boundaries.next(d, new double[] {0.4, 1.05});
        assertEquals(last.efficacyZ(), last.futilityZ(), 0);
        LookBoundary interim = Boundaries.next(d, new double[] {0.4});
        assertTrue(interim.futilityZ() < interim.efficacyZ(), interim.toString());
    }

    @Test
    void flexibleLooks_fromThePlannedSet_equalTheDesignRecomputation() {
        // The planned drift is a property of the design; reusing it must not change a single bit.
        Design d = Design.of(0.05, 2).withEqualLooks(5).withFutility("power:2", 0.2, false);
        BoundarySet planned = Boundaries.compute(d);
        double[] reached = {0.23, 0.41, 0.66};
        assertEquals(Boundaries.next(d, reached), Boundaries.next(planned, reached));
    }

    // ---------------------------------------------------------------------------------- bad arguments

    @Test
    void badArguments_failWithMessagesThatStateTheRule() {
        assertMessage("not in (0, 1)", () -> Design.of(0, 2));
        assertMessage("not in (0, 1)", () -> Design.of(1.2, 1));
        assertMessage("not in (0, 1)", () -> Design.of(Double.NaN, 1));
        assertMessage("sides 3 not in [1, 2]", () -> Design.of(0.05, 3));
        assertMessage("strictly increasing", () -> Design.of(0.05, 2).withLooks(0.5, 0.4, 1));
        assertMessage("strictly increasing", () -> Design.of(0.05, 2).withLooks(0.5, Double.NaN, 1));
        assertMessage("last planned information fraction must be 1", () -> Design.of(0.05, 2).withLooks(0.5, 0.9));
        assertMessage("number of looks 0 not in [1, 200]", () -> Design.of(0.05, 2).withEqualLooks(0));
        assertMessage("number of looks 0 not in [1, 200]", () -> Design.of(0.05, 2).withLooks());
        assertMessage(SpendingFunction.GRAMMAR, () -> Design.of(0.05, 2).withSpending("linear"));
        assertMessage("beta", () -> Design.of(0.05, 2).withFutility("pocock", 1, true));
        assertMessage("must equal 1 - beta", () -> Boundaries.compute(Design.of(0.025, 1).withPower(0.9)
                .withFutility("pocock", 0.2, true)));
        assertMessage("take no futility", () -> Boundaries.compute(Design.of(0.025, 1)
                .withClassical(ClassicalShape.POCOCK).withFutility("pocock", 0.2, true)));
        assertMessage("only the last may be >= 1", () -> Boundaries.next(Design.of(0.05, 2), new double[] {1, 1.1}));
        assertMessage("strictly increasing", () -> Boundaries.next(Design.of(0.05, 2), new double[] {0.4, 0.3}));
        assertMessage("none", () -> Boundaries.next(Design.of(0.05, 2), new double[0]));
        assertMessage("need a spending function", () -> Boundaries.next(Design.of(0.05, 2)
                .withClassical(ClassicalShape.POCOCK), new double[] {0.5}));
    }

    private static void assertMessage(String part, Executable call) {
        StatsException e = assertThrows(StatsException.class, call);
        assertTrue(e.getMessage().contains(part), () -> "message '" + e.getMessage() + "' lacks '" + part + "'");
    }

    // ---------------------------------------------------------------------------------- effort

    @Test
    void rootFinderEffort_isBoundedAndAsserted() {
        BoundarySet.SolverCounts k5 = Boundaries.compute(Design.of(0.05, 2).withEqualLooks(5)).solverCounts();
        // Measured: 26 evaluations over 5 bound solves, at most 7 in one solve.
        assertTrue(k5.worstBoundSolve() <= 10 && k5.boundEvaluations() <= 40, k5.toString());
        BoundarySet.SolverCounts k10 = Boundaries.compute(Design.of(0.025, 1).withEqualLooks(10)
                .withFutility("hwang-shih-decani:-2", 0.1, true)).solverCounts();
        // Measured: 6 outer (drift) evaluations, at most 9 per bound solve.
        assertTrue(k10.outerEvaluations() <= 10, k10.toString());
        assertTrue(k10.worstBoundSolve() <= 16, k10.toString());
        BoundarySet.SolverCounts k100 = Boundaries.compute(Design.of(0.05, 2).withEqualLooks(100).withSpending("pocock"))
                .solverCounts();
        assertTrue(k100.worstBoundSolve() <= 16 && k100.boundEvaluations() <= 100 * 12, k100.toString());
        assertTrue(k100.worstBoundSolve() <= Boundaries.BOUND_MAX_EVALUATIONS);
    }

    @Test
    void rootFinder_reportsItsBudgetWhenExhausted() {
        RootFinder rf = new RootFinder(1e-300, 0, 5);
        StatsException e = assertThrows(StatsException.class, () -> rf.solve(x -> x * x * x - 2, 0, 2));
        assertTrue(e.getMessage().contains("budget of 5"), e.getMessage());
        RootFinder ok = new RootFinder(1e-12, 0, 60);
        assertClose(Math.cbrt(2), ok.solve(x -> x * x * x - 2, 0, 2), 1e-11, "cube root of 2 (Brent 1973)");
        assertTrue(ok.totalEvaluations() <= 15, "evaluations " + ok.totalEvaluations());
    }

    @Test
    void benchmarkWorkload_runsAndIsFinite() {
        assertTrue(Double.isFinite(Boundaries.benchmarkWorkload()));
        assertClose(Normal.upperQuantile(0.025), Boundaries.compute(Design.of(0.05, 2)).looks().get(0).efficacyZ(), 1e-9,
                "fixed two-sided bound (Commons Math quantile)");
    }
}
