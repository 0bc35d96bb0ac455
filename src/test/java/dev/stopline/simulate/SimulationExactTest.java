package dev.stopline.simulate;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.plan.Plan;
import dev.stopline.stats.groupseq.CrossingProbabilities;
import dev.stopline.stats.groupseq.StoppingProbabilities;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;
import org.junit.jupiter.api.Test;

/** Exact operating characteristics against design properties, and against the two Monte Carlo engines. */
class SimulationExactTest {
    private static ZScalePlan z(Plan plan) {
        return ZScalePlan.of(ExperimentMonitor.of(plan, 1));
    }

    @Test
    void typeOneError_obfPlanWithoutFutility_equalsPlanAlpha() {
        ZScalePlan z = z(SimulationPlans.obfWithoutFutility());
        Characteristics exact = ExactEngine.run(z, 0);
        // The boundaries spend exactly alpha under theta = 0 (Lan & DeMets 1983; the recursion of
        // Jennison & Turnbull 2000, ch. 19, is accurate to about 1e-7): P_0(efficacy) is the plan's 0.05.
        assertEquals(0.05, exact.efficacy(), 1e-4, "exact type I error");
        Characteristics mc = ZScaleEngine.run(z, 0, 200_000, 11, Parallel.of(2, null));
        double err = Math.abs(mc.efficacy() - 0.05);
        assertTrue(err < 3 * mc.efficacySe(), "MC type I error " + mc.efficacy() + " +- " + mc.efficacySe());
    }

    @Test
    void typeOneError_nonBindingFutilityObeyed_isBelowAlphaAndEfficacyAloneSpendsAlpha() {
        ZScalePlan z = z(SimulationPlans.example("checkout-redesign"));
        double obeyed = ExactEngine.run(z, 0).efficacy();
        // Non-binding futility: efficacy bounds are computed as if futility did not exist, so ignoring
        // futility spends exactly alpha = 0.05 (Jennison & Turnbull 2000, sec. 7.2), and obeying it can only stop earlier.
        double[] t = z.timing();
        double[] b = z.efficacy();
        double[] lo = new double[t.length];
        for (int k = 0; k < t.length; k++) {
            lo[k] = -b[k];
        }
        CrossingProbabilities.Result ignored = CrossingProbabilities.compute(t, lo, b, 0);
        assertEquals(0.05, ignored.totalUpper() + ignored.totalLower(), 1e-4, "efficacy alone, plan alpha");
        assertTrue(obeyed < 0.05 - 1e-3, "futility obeyed lowers the type I error: " + obeyed);
    }

    @ParameterizedTest
    @ValueSource(doubles = {-1.0, 0.0, 1.5, 2.8, 4.0})
    void stoppingProbabilities_withoutInnerFutility_matchCrossingProbabilities(double theta) {
        ZScalePlan z = z(SimulationPlans.obfWithoutFutility());
        double[] t = z.timing();
        double[] b = z.efficacy();
        double[] lo = new double[t.length];
        for (int k = 0; k < t.length; k++) {
            lo[k] = -b[k];
        }
        CrossingProbabilities.Result cp = CrossingProbabilities.compute(t, lo, b, theta);
        StoppingProbabilities.Result sp = StoppingProbabilities.compute(t, 2, b, null, theta);
        for (int k = 0; k < t.length; k++) {
            // Same recursion, same grid: agreement to rounding.
            assertEquals(cp.upper()[k], sp.efficacyUpper()[k], 1e-12, "upper exit at look " + (k + 1));
            assertEquals(cp.lower()[k], sp.efficacyLower()[k], 1e-12, "lower exit at look " + (k + 1));
        }
    }

    @Test
    void power_atMinimumEffect_planSizedFromPower_isTargetPower() {
        Plan plan = SimulationPlans.meanSizedFromPower();
        ZScalePlan z = z(plan);
        double power = ExactEngine.run(z, z.drift(0.15)).efficacy();
        // The plan asks for 80% power at +0.15; sizing rounds the maximum up to whole units, which can
        // only add power, by less than phi(z) * z / (2 n) ~ 1e-5 at these sizes; the recursion adds ~1e-7.
        assertTrue(power >= 0.8 - 1e-5 && power <= 0.8 + 1e-3, "power at the minimum effect " + power);
    }

    @Test
    void power_atMinimumEffect_sizedFromPowerWithFutilityObeyed_isOneMinusBeta() {
        Plan plan = SimulationPlans.proportionSizedFromPowerWithFutility();
        ZScalePlan z = z(plan);
        double power = ExactEngine.run(z, z.drift(0.005)).efficacy();
        // Beta-spending futility: the design drift is where the futility and efficacy bounds meet, so the
        // power with futility obeyed is 1 - beta = 0.8 (Pampallona & Tsiatis 1994; Jennison & Turnbull 2000, sec. 7.2).
        // Tolerance: rounding up the size, and our proportion variance under the alternative equal to the sizing's.
        assertTrue(power >= 0.8 - 1e-4 && power <= 0.8 + 2e-3, "power at the minimum effect " + power);
    }

    @ParameterizedTest
    @ValueSource(doubles = {0.0, 0.0025, 0.005, 0.008, -0.004})
    void exactAndZScaleMonteCarlo_agreeWithinThreeStandardErrors(double effect) {
        ZScalePlan z = z(SimulationPlans.example("checkout-redesign"));
        double theta = z.drift(effect);
        Characteristics exact = ExactEngine.run(z, theta);
        Characteristics mc = ZScaleEngine.run(z, theta, 100_000, 7, Parallel.of(2, null));
        within3Se("efficacy", exact.efficacy(), mc.efficacy(), mc.efficacySe());
        within3Se("futility", exact.futility(), mc.futility(), mc.futilitySe());
        within3Se("expected units per arm", exact.expectedUnitsPerArm(), mc.expectedUnitsPerArm(),
                mc.expectedUnitsPerArmSe());
        double[] pe = exact.stopLook();
        double[] pm = mc.stopLook();
        // The K per-look probabilities are K simultaneous checks: 3 SE family-wise over 5 looks is
        // 3.46 SE each (Bonferroni, 0.0027 / 5 two-sided).
        for (int k = 0; k < pe.length; k++) {
            double se = Characteristics.binomialSe(pe[k], mc.trials());
            assertTrue(Math.abs(pe[k] - pm[k]) <= 3.46 * se, "stop at look " + (k + 1) + ": exact " + pe[k]
                    + ", Monte Carlo " + pm[k] + " (" + Math.abs(pe[k] - pm[k]) / se + " SE)");
        }
    }

    @Test
    void stopLookProbabilities_sumToOne_andEfficacyPlusFutilityPlusNoDecisionIsOne() {
        Characteristics c = ExactEngine.run(z(SimulationPlans.obfWithoutFutility()), 2.0);
        double s = 0;
        for (double p : c.stopLook()) {
            s += p;
        }
        assertEquals(1, s, 1e-12, "stopping-look distribution");
        assertEquals(1, c.efficacy() + c.futility() + c.noDecision(), 1e-12, "decisions");
        assertEquals(0, c.futility(), 0, "no futility bound, no futility stop");
    }

    static void within3Se(String what, double exact, double mc, double se) {
        assertTrue(Math.abs(exact - mc) <= 3 * se + 1e-12,
                what + ": exact " + exact + ", Monte Carlo " + mc + " +- " + se + " (" + Math.abs(exact - mc) / se + " SE)");
    }
}
