package dev.stopline.stats.groupseq;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.stats.StatsException;
import java.util.List;
import java.util.SplittableRandom;
import org.apache.commons.math3.distribution.NormalDistribution;
import org.junit.jupiter.api.Test;

class SequentialInferenceTest {
    /** Commons Math, independent of dev.stopline.stats.Normal. */
    private static final NormalDistribution STD = new NormalDistribution(0, 1);
    private static final double Z975 = STD.inverseCumulativeProbability(0.975);
    private static final double Z80 = STD.inverseCumulativeProbability(0.80);

    private static BoundarySet obf5() {
        return Boundaries.compute(Design.of(0.05, 2).withEqualLooks(5).withSpending("obrien-fleming").withPower(0.8));
    }

    private static SequentialInference singleLook(int sides) {
        double c = STD.inverseCumulativeProbability(1 - 0.05 / sides);
        double lo = sides == 2 ? -c : Double.NEGATIVE_INFINITY;
        return SequentialInference.of(new double[] {1}, new double[] {lo}, new double[] {c}, sides);
    }

    // ------------------------------------------------------------------ single look = fixed test

    @Test
    void pValue_singleLook_isTheOrdinaryTwoSidedPValue() {
        // ordinary two-sided p = 2 (1 - Phi(|z|)), Commons Math
        for (double z : new double[] {-2.7, -0.4, 0.0, 1.1, 2.3, 4.0}) {
            double expected = 2 * (1 - STD.cumulativeProbability(Math.abs(z)));
            double p = singleLook(2).adjustedPValue(z);
            assertEquals(expected, p, 1e-9 + 1e-7 * expected, "z = " + z);
        }
    }

    @Test
    void pValue_singleLookOneSided_isTheOrdinaryUpperTail() {
        for (double z : new double[] {-1.0, 0.5, 2.5}) {
            double expected = 1 - STD.cumulativeProbability(z); // Commons Math
            assertEquals(expected, singleLook(1).adjustedPValue(z), 1e-9 + 1e-7 * expected, "z = " + z);
        }
    }

    @Test
    void repeatedConfidenceInterval_singleLook_isTheOrdinary95PercentInterval() {
        // 0.012 +/- 1.96 * 0.004 (common practice: 95% two-sided, z = 1.959964)
        SequentialInference.Interval ci = singleLook(2).repeatedConfidenceInterval(0.012, 0.004);
        assertEquals(0.012 - Z975 * 0.004, ci.lower(), 1e-12);
        assertEquals(0.012 + Z975 * 0.004, ci.upper(), 1e-12);
        SequentialInference.Interval one = singleLook(1).repeatedConfidenceInterval(0.012, 0.004);
        assertEquals(0.012 - 1.644854 * 0.004, one.lower(), 1e-8); // z_0.95 = 1.644854 (Commons Math, 6 dp)
        assertEquals(Double.POSITIVE_INFINITY, one.upper());
    }

    @Test
    void medianUnbiasedEstimate_singleLook_isTheNaiveEstimate() {
        SequentialInference.Estimate e = singleLook(2).medianUnbiasedDrift(2.5);
        assertEquals(2.5, e.drift(), 1e-6, "theta with P(Z >= 2.5) = 1/2 under N(theta, 1) is 2.5");
        assertEquals(0.025, singleLook(2).medianUnbiasedEffect(2.5, 0.01), 1e-8, "2.5 * se");
        assertEquals(-1.3, singleLook(2).medianUnbiasedDrift(-1.3).drift(), 1e-6, "mirrored ordering");
        assertTrue(e.evaluations() <= 20, "evaluations " + e.evaluations());
    }

    // ------------------------------------------------------------------ multi-look

    @Test
    void pValue_atFirstLook_equalsNominalPValue() {
        BoundarySet plan = obf5();
        SequentialInference first = SequentialInference.fromPlan(plan, 1);
        double z = 5.2;
        double nominal = 2 * (1 - STD.cumulativeProbability(z)); // Commons Math
        assertEquals(nominal, first.adjustedPValue(z), 1e-6 * nominal);
        assertEquals(z / Math.sqrt(0.2), first.medianUnbiasedDrift(z).drift(), 1e-6,
                "first look: MUE equals the naive drift z / sqrt(t1)");
    }

    @Test
    void pValue_onTheBoundary_equalsCumulativeAlphaSpent() {
        // cross-check between the engine's boundary search and our ordering: a result exactly on the
        // boundary at look k is as extreme as any crossing up to k, so p = alpha spent through k
        BoundarySet plan = obf5();
        for (int k = 1; k <= 5; k++) {
            LookBoundary b = plan.looks().get(k - 1);
            double p = SequentialInference.fromPlan(plan, k).adjustedPValue(b.efficacyZ());
            double spent = b.cumulativeAlphaSpent();
            assertEquals(spent, p, 1e-4 * spent, "look " + k + " relative error " + (p - spent) / spent);
        }
    }

    @Test
    void pValue_oneSidedWithFutility_onTheBoundaryEqualsAlphaSpent_bindingAndNonBinding() {
        // binding: the engine spends alpha with futility stops in the continuation region, so the ordering
        // must use them as lower bounds; non-binding: as if futility did not exist (lower = -infinity)
        for (boolean binding : new boolean[] {true, false}) {
            BoundarySet plan = Boundaries.compute(Design.of(0.025, 1).withEqualLooks(3)
                    .withSpending("obrien-fleming").withFutility("power:2", 0.1, binding).withPower(0.9));
            for (int k = 1; k <= 3; k++) {
                LookBoundary b = plan.looks().get(k - 1);
                double p = SequentialInference.fromPlan(plan, k).adjustedPValue(b.efficacyZ());
                double spent = b.cumulativeAlphaSpent();
                assertEquals(spent, p, 1e-4 * spent,
                        "binding " + binding + " look " + k + " relative error " + (p - spent) / spent);
            }
        }
    }

    @Test
    void repeatedConfidenceInterval_usesTheBoundaryOfTheLook() {
        BoundarySet plan = obf5();
        LookBoundary b2 = plan.looks().get(1);
        SequentialInference.Interval ci = SequentialInference.fromPlan(plan, 2).repeatedConfidenceInterval(0.03, 0.01);
        assertEquals(0.03 - b2.efficacyZ() * 0.01, ci.lower(), 1e-12);
        // K = 5 OBF-type boundary at look 2 is about 3.357 (J&T 2000 / Lan & DeMets 1983, from memory)
        assertEquals(3.357, b2.efficacyZ(), 0.002);
    }

    @Test
    void atLooks_unplannedFractions_recomputeTheBoundaryOfTheCurrentLook() {
        Design design = Design.of(0.05, 2).withEqualLooks(5).withSpending("obrien-fleming");
        double[] reached = {0.23, 0.51};
        SequentialInference inf = SequentialInference.atLooks(design, reached);
        LookBoundary current = Boundaries.next(design, reached);
        assertEquals(2, inf.currentLook());
        assertEquals(current.efficacyZ(), inf.currentBoundary(), 0.0);
        // the adjusted p on the recomputed boundary equals the alpha spent through t = 0.51
        double p = inf.adjustedPValue(current.efficacyZ());
        double spent = current.cumulativeAlphaSpent();
        assertEquals(spent, p, 1e-4 * spent, "relative error " + (p - spent) / spent);
    }

    @Test
    void medianUnbiasedEstimate_afterEarlyCrossing_isBelowNaiveAndHitsHalfByMonteCarlo() {
        BoundarySet plan = obf5();
        SequentialInference at2 = SequentialInference.fromPlan(plan, 2);
        double z = 3.6; // crossed 3.357 at t = 0.4
        SequentialInference.Estimate mue = at2.medianUnbiasedDrift(z);
        double naive = z / Math.sqrt(0.4);
        assertTrue(mue.drift() < naive, "MUE " + mue.drift() + " should shrink the naive " + naive);
        assertTrue(mue.evaluations() <= SequentialInference.MAX_EVALUATIONS);
        // reaching the last look and only just crossing: the early looks that did not stop pull the
        // estimate down clearly (measured 2.1235 vs naive 2.2)
        double last = SequentialInference.fromPlan(plan, 5).medianUnbiasedDrift(2.2).drift();
        assertTrue(last < 2.2 - 0.05, "MUE at look 5 " + last);
        assertTrue(mue.evaluations() <= 25, "evaluations " + mue.evaluations());

        // seeded Monte Carlo at theta = MUE: P(cross at look 1, or reach look 2 with Z2 >= z) = 1/2
        double[] t = {0.2, 0.4};
        double c1 = plan.looks().get(0).efficacyZ();
        SplittableRandom rng = new SplittableRandom(7L);
        int n = 40_000;
        int extreme = 0;
        for (int i = 0; i < n; i++) {
            double[] zs = path(rng, t, mue.drift());
            if (zs[0] >= c1 || (zs[0] > -c1 && zs[1] >= z)) {
                extreme++;
            }
        }
        double frac = (double) extreme / n;
        double se = Math.sqrt(0.25 / n);
        assertEquals(0.5, frac, 3 * se, "Monte Carlo error " + (frac - 0.5) / se + " SE");
    }

    @Test
    void adjustedPValue_underNull_isUniformBySeededMonteCarlo() {
        BoundarySet plan = obf5();
        List<LookBoundary> looks = plan.looks();
        double[] t = looks.stream().mapToDouble(LookBoundary::informationFraction).toArray();
        SequentialInference[] at = new SequentialInference[5];
        for (int k = 1; k <= 5; k++) {
            at[k - 1] = SequentialInference.fromPlan(plan, k);
        }
        SplittableRandom rng = new SplittableRandom(20261201L);
        int n = 4000;
        int below05 = 0;
        int below50 = 0;
        for (int i = 0; i < n; i++) {
            double[] zs = path(rng, t, 0.0);
            int k = 0;
            while (k < 4 && Math.abs(zs[k]) < looks.get(k).efficacyZ()) {
                k++;
            }
            double p = at[k].adjustedPValue(zs[k]);
            below05 += p <= 0.05 ? 1 : 0;
            below50 += p <= 0.5 ? 1 : 0;
        }
        double f05 = (double) below05 / n;
        double f50 = (double) below50 / n;
        double se05 = Math.sqrt(0.05 * 0.95 / n);
        double se50 = Math.sqrt(0.25 / n);
        assertEquals(0.05, f05, 3 * se05, "P(p <= 0.05) error " + (f05 - 0.05) / se05 + " SE");
        assertEquals(0.5, f50, 3 * se50, "P(p <= 0.5) error " + (f50 - 0.5) / se50 + " SE");
    }

    @Test
    void repeatedConfidenceIntervals_coverAllLooksSimultaneouslyAt95PercentBySeededMonteCarlo() {
        BoundarySet plan = obf5();
        double[] t = plan.looks().stream().mapToDouble(LookBoundary::informationFraction).toArray();
        SequentialInference[] at = new SequentialInference[5];
        for (int k = 1; k <= 5; k++) {
            at[k - 1] = SequentialInference.fromPlan(plan, k);
        }
        // effect delta = 0.02 with I_max = 1 / 0.008^2; se at look k = 0.008 / sqrt(t_k)
        double delta = 0.02;
        double seMax = 0.008;
        double theta = delta / seMax;
        SplittableRandom rng = new SplittableRandom(99L);
        int n = 20_000;
        int covered = 0;
        for (int i = 0; i < n; i++) {
            double[] zs = path(rng, t, theta);
            boolean all = true;
            for (int k = 0; k < 5 && all; k++) {
                double se = seMax / Math.sqrt(t[k]);
                all = at[k].repeatedConfidenceInterval(zs[k] * se, se).contains(delta);
            }
            covered += all ? 1 : 0;
        }
        double f = (double) covered / n;
        double se = Math.sqrt(0.95 * 0.05 / n);
        assertEquals(0.95, f, 3 * se, "simultaneous coverage error " + (f - 0.95) / se + " SE");
    }

    // ------------------------------------------------------------------ conditional power

    @Test
    void conditionalPower_atTimeZeroUnderTheDesignDrift_equalsTheDesignPower() {
        // self-consistency: conditioning on nothing reproduces the planned power (0.8, common practice)
        BoundarySet plan = obf5();
        double[] t = plan.looks().stream().mapToDouble(LookBoundary::informationFraction).toArray();
        double[] up = plan.looks().stream().mapToDouble(LookBoundary::efficacyZ).toArray();
        double[] lo = new double[5];
        for (int i = 0; i < 5; i++) {
            lo[i] = -up[i];
        }
        double cp = SequentialInference.conditionalPower(0.0, 0.0, t, lo, up, plan.drift());
        assertEquals(0.8, cp, 1e-4, "power at t = 0");
        // fixed design: theta = z_.975 + z_.8 gives power 0.8 (Commons Math quantiles)
        double fixed = SequentialInference.conditionalPower(0.0, 0.0, new double[] {1},
                new double[] {-Z975}, new double[] {Z975}, Z975 + Z80);
        assertEquals(0.8, fixed, 1e-9);
    }

    @Test
    void conditionalPower_singleFinalLook_closedFormAgreesWithCrossingProbabilities() {
        // Lan, Simon & Halperin (1982) closed form vs. the shifted recursion with a dummy look that never stops
        double tNow = 0.4;
        double z = 1.2;
        double theta = 2.1;
        double closed = SequentialInference.conditionalPower(tNow, z, new double[] {1}, new double[] {-1.98},
                new double[] {1.98}, theta);
        double viaEngine = SequentialInference.conditionalPower(tNow, z, new double[] {0.7, 1},
                new double[] {Double.NEGATIVE_INFINITY, Double.NEGATIVE_INFINITY},
                new double[] {Double.POSITIVE_INFINITY, 1.98}, theta);
        double byHand = 1 - STD.cumulativeProbability((1.98 - z * Math.sqrt(tNow) - theta * 0.6) / Math.sqrt(0.6));
        assertEquals(byHand, closed, 1e-9);
        assertEquals(closed, viaEngine, 1e-5, "integration error " + (viaEngine - closed));
    }

    @Test
    void conditionalPower_remainingLooks_agreesWithSeededMonteCarlo() {
        BoundarySet plan = obf5();
        double z2 = 1.5; // at look 2 (t = 0.4), continuing
        double theta = SequentialInference.currentTrendDrift(z2, 0.4);
        double cp = SequentialInference.conditionalPower(plan, 2, z2, theta);
        double[] t = {0.4, 0.6, 0.8, 1.0};
        double[] c = {0, plan.looks().get(2).efficacyZ(), plan.looks().get(3).efficacyZ(),
            plan.looks().get(4).efficacyZ()};
        SplittableRandom rng = new SplittableRandom(4242L);
        int n = 40_000;
        int hits = 0;
        for (int i = 0; i < n; i++) {
            double b = z2 * Math.sqrt(0.4);
            for (int k = 1; k < 4; k++) {
                double dt = t[k] - t[k - 1];
                b += theta * dt + Math.sqrt(dt) * gaussian(rng);
                double zk = b / Math.sqrt(t[k]);
                if (zk >= c[k]) {
                    hits++;
                    break;
                }
                if (zk <= -c[k]) {
                    break;
                }
            }
        }
        double f = (double) hits / n;
        double se = Math.sqrt(cp * (1 - cp) / n);
        assertEquals(cp, f, 3 * se, "Monte Carlo error " + (f - cp) / se + " SE");
        assertEquals(cp, SequentialInference.conditionalPowerUnderTrend(plan, 2, z2), 0.0);
        double underDesign = SequentialInference.conditionalPowerUnderDesign(plan, 2, z2);
        assertTrue(underDesign > cp, "design drift " + plan.drift() + " exceeds the trend " + theta);
    }

    @Test
    void lookThatSpentNoAlpha_hasWholeLineIntervalAndDoesNotChangeTheFinalPValue() {
        // an infinite first boundary never stops, so the final look is the fixed test (Commons Math p-value)
        double inf = Double.POSITIVE_INFINITY;
        SequentialInference first = SequentialInference.of(new double[] {0.5}, new double[] {-inf},
                new double[] {inf}, 2);
        SequentialInference.Interval ci = first.repeatedConfidenceInterval(0.1, 0.05);
        assertEquals(Double.NEGATIVE_INFINITY, ci.lower());
        assertEquals(inf, ci.upper());
        SequentialInference both = SequentialInference.of(new double[] {0.5, 1}, new double[] {-inf, -Z975},
                new double[] {inf, Z975}, 2);
        double expected = 2 * (1 - STD.cumulativeProbability(2.4));
        assertEquals(expected, both.adjustedPValue(2.4), 1e-6 * expected);
    }

    @Test
    void badInputs_stateTheRule() {
        StatsException e = assertThrows(StatsException.class, () -> SequentialInference.of(
                new double[] {0.5, 0.4}, new double[] {-3, -2}, new double[] {3, 2}, 2));
        assertEquals("information fractions must increase strictly (got [0.5, 0.4])", e.getMessage());
        e = assertThrows(StatsException.class, () -> SequentialInference.of(
                new double[] {1}, new double[] {-1}, new double[] {2}, 2));
        assertEquals("two-sided inference needs symmetric bounds (look 1: -1.0, 2.0)", e.getMessage());
    }

    // ------------------------------------------------------------------ helpers

    /** Canonical Z path: B increments N(theta dt, dt), Z_k = B(t_k) / sqrt(t_k). */
    private static double[] path(SplittableRandom rng, double[] t, double theta) {
        double[] z = new double[t.length];
        double b = 0;
        double prev = 0;
        for (int k = 0; k < t.length; k++) {
            double dt = t[k] - prev;
            b += theta * dt + Math.sqrt(dt) * gaussian(rng);
            z[k] = b / Math.sqrt(t[k]);
            prev = t[k];
        }
        return z;
    }

    /** Box-Muller from a SplittableRandom (deterministic given the seed). */
    private static double gaussian(SplittableRandom rng) {
        double u = 1.0 - rng.nextDouble();
        double v = rng.nextDouble();
        return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
    }
}
