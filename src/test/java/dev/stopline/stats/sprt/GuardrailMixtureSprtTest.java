package dev.stopline.stats.sprt;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.stats.Normal;
import dev.stopline.stats.StatsException;
import java.util.SplittableRandom;
import org.apache.commons.math3.analysis.integration.IterativeLegendreGaussIntegrator;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;

class GuardrailMixtureSprtTest {
    private static final double ALPHA = 0.05; // common practice
    private static final double TAU2 = 0.01;
    private static final double MARGIN = 0.05;
    // checkout-redesign guardrail: page load time (standardised units) must not rise by more than 0.05
    private static final GuardrailMixtureSprt LOAD_TIME =
            GuardrailMixtureSprt.of(ALPHA, TAU2, HarmDirection.INCREASE, MARGIN);
    private static final int STREAMS = 1000; // SE of a rate near alpha: sqrt(0.05*0.95/1000) ~ 0.0069
    private static final int LOOKS = 1000;

    @ParameterizedTest(name = "d = {0}, v = {1}")
    @CsvSource({"0.05, 0.02", "0.15, 0.02", "-0.2, 0.02", "0.06, 0.0001", "1.0, 0.5", "0.0, 0.002"})
    void likelihoodRatio_equalsTheHalfNormalMixtureByQuadrature(double d, double v) {
        double tau = Math.sqrt(TAU2);
        double x = d - MARGIN;
        IterativeLegendreGaussIntegrator quadrature = new IterativeLegendreGaussIntegrator(16, 1e-12, 1e-14);
        double integral = quadrature.integrate(10_000,
                theta -> Math.exp((theta * x - 0.5 * theta * theta) / v) * 2 * Normal.pdf(theta / tau) / tau,
                0, 12 * tau); // Commons Math
        double lambda = Math.exp(LOAD_TIME.logLikelihoodRatio(d, v));
        assertEquals(integral, lambda, 1e-9 * lambda, "half-normal mixture of exp((theta x - theta^2/2)/v)");
        assertTrue(quadrature.getEvaluations() < 10_000, "quadrature evaluations " + quadrature.getEvaluations());
    }

    @Test
    void decreaseIsHarm_mirrorsIncreaseIsHarm() {
        GuardrailMixtureSprt conversion = GuardrailMixtureSprt.of(ALPHA, TAU2, HarmDirection.DECREASE, MARGIN);
        assertEquals(LOAD_TIME.logLikelihoodRatio(0.12, 0.003), conversion.logLikelihoodRatio(-0.12, 0.003), 0.0);
        assertEquals(LOAD_TIME.harmLowerBound(0.12, 0.003), conversion.harmLowerBound(-0.12, 0.003), 0.0);
    }

    @Test
    void criticalExcess_solvesLambdaPlusEqualsOneOverAlpha_withinItsBudget() {
        for (double v : new double[] {1e-7, 1e-4, 0.002, 0.1, 30}) {
            int[] evaluations = {0};
            double x = LOAD_TIME.criticalExcess(v, evaluations);
            assertEquals(Math.log(1 / ALPHA), LOAD_TIME.logLikelihoodRatio(x + MARGIN, v), 1e-9, "ln Lambda+ at x*, v=" + v);
            assertTrue(evaluations[0] <= 30, "Brent evaluations " + evaluations[0] + " at v = " + v);
            MixtureSprt twoSided = MixtureSprt.of(ALPHA, TAU2);
            assertTrue(x <= twoSided.halfWidth(v), "one-sided bound is never wider than the two-sided one");
            assertTrue(x >= MixtureSprt.of(2 * ALPHA, TAU2).halfWidth(v), "nor narrower than two-sided at 2 alpha");
        }
    }

    @Test
    void rejection_happensExactlyWhenTheLowerBoundReachesTheMargin() {
        double v = 0.002;
        double x = LOAD_TIME.criticalExcess(v);
        for (double d = -0.3; d <= 0.5; d += 0.001) {
            if (Math.abs(d - MARGIN - x) < 1e-9) {
                continue; // rounding decides at the boundary itself
            }
            assertEquals(LOAD_TIME.harmLowerBound(d, v) >= MARGIN, LOAD_TIME.rejects(d, v), "d = " + d);
        }
    }

    /**
     * Type-I error at the edge of the null (true harm exactly the margin), where it is largest, and
     * inside it (no harm): 1000 seeded streams of 1000 looks, unit-variance data per arm, known variance.
     */
    @Test
    void typeOneError_atTheMarginAndBelow_isAtMostAlphaPlus3Se() {
        double se = Math.sqrt(ALPHA * (1 - ALPHA) / STREAMS);
        double atMargin = rejectionRate(MARGIN, new SplittableRandom(31));
        double noHarm = rejectionRate(0.0, new SplittableRandom(32));
        assertTrue(atMargin <= ALPHA + 3 * se, () -> String.format("type-I at margin %.4f > %.4f", atMargin, ALPHA + 3 * se));
        assertTrue(noHarm <= atMargin, () -> String.format("no harm %.4f should not reject more than at margin %.4f",
                noHarm, atMargin));
    }

    @Test
    void power_againstHarmWellBeyondTheMargin_isHigh() {
        double rate = rejectionRate(MARGIN + 0.2, new SplittableRandom(33));
        assertTrue(rate > 0.9, () -> "power " + rate);
    }

    /** The running maximum of the lower bounds stays below the true harm in all looks, in >= 1 - alpha - 3 SE. */
    @Test
    void harmLowerBound_coversTheTrueHarmAtAllLooks() {
        SplittableRandom rnd = new SplittableRandom(34);
        double harm = 0.08;
        int misses = 0;
        for (int stream = 0; stream < STREAMS; stream++) {
            double sum = 0;
            GuardrailMixtureSprt.State state = LOAD_TIME.start();
            for (int n = 1; n <= LOOKS && state.harmLowerBound() <= harm; n++) {
                sum += harm + MixtureSprtTest.gaussian(rnd) - MixtureSprtTest.gaussian(rnd);
                state = state.update(sum / n, 2.0 / n);
            }
            misses += state.harmLowerBound() > harm ? 1 : 0;
        }
        double rate = (double) misses / STREAMS;
        double se = Math.sqrt(ALPHA * (1 - ALPHA) / STREAMS);
        assertTrue(rate <= ALPHA + 3 * se, () -> String.format("non-coverage %.4f > %.4f", rate, ALPHA + 3 * se));
    }

    @Test
    void state_keepsRunningMinimumPValueAndMaximumBound() {
        double[][] looks = {{0.30, 0.02}, {0.12, 0.004}, {0.02, 0.002}, {0.09, 0.001}};
        GuardrailMixtureSprt.State state = LOAD_TIME.start();
        double p = 1;
        double bound = Double.NEGATIVE_INFINITY;
        for (double[] look : looks) {
            state = state.update(look[0], look[1]);
            p = Math.min(p, LOAD_TIME.lookPValue(look[0], look[1]));
            bound = Math.max(bound, LOAD_TIME.harmLowerBound(look[0], look[1]));
            assertEquals(p, state.pValue(), 0.0, "running minimum p-value");
            assertEquals(bound, state.harmLowerBound(), 0.0, "running maximum bound (shortcut is exact)");
            assertEquals(p <= ALPHA, state.harmShown());
        }
        assertEquals(looks.length, state.looks());
        assertEquals(1.0, LOAD_TIME.start().pValue(), 0.0);
    }

    @Test
    void badParameters_areRejectedWithTheRule() {
        assertMessage("one-sided alpha 0.5 must be < 0.5",
                () -> GuardrailMixtureSprt.of(0.5, TAU2, HarmDirection.INCREASE, 0));
        assertMessage("margin -0.1 must be finite and >= 0",
                () -> GuardrailMixtureSprt.of(ALPHA, TAU2, HarmDirection.INCREASE, -0.1));
        assertMessage("harm direction must be given", () -> GuardrailMixtureSprt.of(ALPHA, TAU2, null, 0));
    }

    /**
     * Rejection rate over seeded streams, from the running minimum of {@code lookPValue} (what the
     * state keeps, see {@link #state_keepsRunningMinimumPValueAndMaximumBound()}); the state's lower
     * bound needs a root finding per look, which these rate simulations do not need.
     */
    private static double rejectionRate(double harm, SplittableRandom rnd) {
        int rejections = 0;
        for (int stream = 0; stream < STREAMS; stream++) {
            double sum = 0;
            double p = 1;
            for (int n = 1; n <= LOOKS && p > ALPHA; n++) {
                sum += harm + MixtureSprtTest.gaussian(rnd) - MixtureSprtTest.gaussian(rnd);
                p = Math.min(p, LOAD_TIME.lookPValue(sum / n, 2.0 / n));
            }
            rejections += p <= ALPHA ? 1 : 0;
        }
        return (double) rejections / STREAMS;
    }

    private static void assertMessage(String part, Runnable call) {
        StatsException e = assertThrows(StatsException.class, call::run);
        assertTrue(e.getMessage().contains(part), () -> "message was: " + e.getMessage());
    }
}
