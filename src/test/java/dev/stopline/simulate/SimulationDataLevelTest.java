package dev.stopline.simulate;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.plan.Plan;
import java.util.SplittableRandom;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;
import org.junit.jupiter.api.Test;

/** The data-level engine: its draws, and the daemon's tests run through it against their published guarantees. */
class SimulationDataLevelTest {
    @ParameterizedTest
    @CsvSource({
            "12, 0.3",      // inversion branch
            "4000, 0.004",  // inversion branch, n p (1 - p) ~ 16
            "6000, 0.1",    // normal branch, n p (1 - p) = 540
            "5000, 0.5",    // normal branch, the arm split
            "30, 0.9"})     // symmetry then inversion
    void binomial_drawsHaveTheBinomialMeanAndVariance(long n, double p) {
        SplittableRandom rng = new SplittableRandom(3);
        int draws = 40_000;
        double s = 0;
        double s2 = 0;
        for (int i = 0; i < draws; i++) {
            long x = DataLevelEngine.binomial(n, p, rng);
            assertTrue(x >= 0 && x <= n, "draw in [0, n]: " + x);
            s += x;
            s2 += (double) x * x;
        }
        double mean = s / draws;
        double var = s2 / draws - mean * mean;
        double v = n * p * (1 - p); // binomial mean n p, variance n p (1 - p) (Commons Math BinomialDistribution)
        assertEquals(n * p, mean, 4 * Math.sqrt(v / draws), "mean (4 SE)");
        // SE of a sample variance ~ v sqrt(2 / draws) (normal-theory); 5 SE to cover the binomial's kurtosis.
        assertEquals(v, var, 5 * v * Math.sqrt(2.0 / draws), "variance (5 SE)");
    }

    @Test
    void mixtureSprtPrimary_typeOneError_isAtMostAlpha() {
        Plan plan = SimulationPlans.example("recommendations-v2");
        DataLevelEngine.Result r = DataLevelEngine.of(plan, null).run(0, 600, 17, Parallel.of(2, null));
        // The mixture SPRT is valid at any stopping time: P_0(reject) <= alpha = 0.05 (Johari et al. 2017).
        double p = r.primary().efficacy();
        assertTrue(p <= 0.05 + 3 * Characteristics.binomialSe(0.05, 600), "type I error " + p);
        // Guardrails under no harm, margin 5% and 0.002: their level 0.01 bounds the false alarms (Johari et al. 2017).
        for (int g = 0; g < r.guardrailAlarm().length; g++) {
            assertTrue(r.guardrailAlarm()[g] <= 0.01 + 3 * Characteristics.binomialSe(0.01, 600),
                    "guardrail " + g + " false alarm " + r.guardrailAlarm()[g]);
        }
    }

    @Test
    void waldSprtPrimary_typeOneErrorNearAlphaAndPowerNearOneMinusBeta() {
        Plan plan = SimulationPlans.example("gift-wrap-upsell");
        DataLevelEngine engine = DataLevelEngine.of(plan, null);
        DataLevelEngine.Result h0 = engine.run(0, 600, 19, Parallel.of(2, null));
        DataLevelEngine.Result h1 = engine.run(0.01, 600, 19, Parallel.of(2, null));
        // Wald (1947): with thresholds A = (1 - beta) / alpha, B = beta / (1 - alpha) the error rates satisfy
        // alpha' <= alpha / (1 - beta) = 0.0625 and beta' <= beta / (1 - alpha) = 0.2105; checked at 3 SE.
        assertTrue(h0.primary().efficacy() <= 0.0625 + 3 * Characteristics.binomialSe(0.0625, 600),
                "type I error " + h0.primary().efficacy());
        double power = h1.primary().efficacy();
        assertTrue(power >= 1 - 0.2105 - 3 * Characteristics.binomialSe(0.79, 600), "power " + power);
    }

    @Test
    void groupSequentialPrimary_dataLevelAgreesWithExact_upToTheOvershootOfDailyLooks() {
        Plan plan = SimulationPlans.obfWithoutFutility();
        DataLevelEngine.Result r = DataLevelEngine.of(plan, null).run(0.005, 800, 23, Parallel.of(2, null));
        ZScalePlan z = ZScalePlan.of(dev.stopline.monitor.ExperimentMonitor.of(plan, 1));
        double exact = ExactEngine.run(z, z.drift(0.005)).efficacy();
        // Snapshots every 2% of the maximum: looks land at most ~0.02 past their planned fraction, and the
        // evaluator recomputes the bounds there (Lan & DeMets 1983), so the power moves by well under 0.02.
        // Allowance: 3 SE plus 0.02 for that.
        double se = r.primary().efficacySe();
        assertTrue(Math.abs(r.primary().efficacy() - exact) <= 3 * se + 0.02,
                "data-level power " + r.primary().efficacy() + " +- " + se + " against exact " + exact);
        assertTrue(r.overshoot() >= 0 && r.overshoot() < 0.03, "mean overshoot " + r.overshoot());
    }
}
