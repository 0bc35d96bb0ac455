package dev.stopline.stats.sprt;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotSame;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.stats.Normal;
import dev.stopline.stats.StatsException;
import java.util.SplittableRandom;
import org.apache.commons.math3.analysis.integration.IterativeLegendreGaussIntegrator;
import org.apache.commons.math3.distribution.NormalDistribution;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;

class MixtureSprtTest {
    private static final double ALPHA = 0.05; // common practice
    private static final double TAU2 = 0.01;  // mixing sd 0.1 = effects of 0.1 sd of a unit-variance metric
    private static final MixtureSprt TEST = MixtureSprt.of(ALPHA, TAU2);
    private static final int STREAMS = 2000;
    private static final int LOOKS = 1000;

    @ParameterizedTest(name = "d = {0}, v = {1}")
    @CsvSource({"0, 0.02", "0.05, 0.02", "-0.3, 0.02", "0.01, 0.0001", "1.2, 0.5"})
    void likelihoodRatio_equalsRatioOfCommonsMathNormalDensitiesAndTheIntegratedMixture(double d, double v) {
        double marginal = new NormalDistribution(null, 0, Math.sqrt(v + TAU2), 1e-9).density(d);
        double nullDensity = new NormalDistribution(null, 0, Math.sqrt(v), 1e-9).density(d);
        double lambda = TEST.likelihoodRatio(d, v);
        assertEquals(marginal / nullDensity, lambda, 1e-12 * lambda, "phi(d; 0, v+tau^2)/phi(d; 0, v)");
        // the mixture by quadrature: integral of exp((delta d - delta^2/2)/v) phi(delta; 0, tau^2) d delta
        double tau = Math.sqrt(TAU2);
        IterativeLegendreGaussIntegrator quadrature = new IterativeLegendreGaussIntegrator(16, 1e-12, 1e-14);
        double integral = quadrature.integrate(10_000,
                delta -> Math.exp((delta * d - 0.5 * delta * delta) / v) * Normal.pdf(delta / tau) / tau,
                -12 * tau, 12 * tau); // Commons Math; mass beyond 12 sd (shifted by < 1 sd here) is negligible
        assertEquals(integral, lambda, 1e-9 * lambda, "mixture integral, Robbins (1970)");
        assertTrue(quadrature.getEvaluations() < 10_000, "quadrature evaluations " + quadrature.getEvaluations());
    }

    @Test
    void halfWidth_isWhereTheLikelihoodRatioReachesOneOverAlpha() {
        for (double v : new double[] {1e-6, 1e-4, 0.01, 0.5, 20}) {
            double w = TEST.halfWidth(v);
            assertEquals(Math.log(1 / ALPHA), TEST.logLikelihoodRatio(w, v), 1e-12, "ln Lambda at d = w, v = " + v);
            assertEquals(Math.log(1 / ALPHA), TEST.logLikelihoodRatio(-w, v), 1e-12, "symmetric, v = " + v);
        }
    }

    /** Proven in the class Javadoc (Mills ratio); checked over a grid of z and r = tau^2/(v+tau^2). */
    @Test
    void everyLook_isNeverMoreLiberalThanAFixedHorizonZTestOfThatLook() {
        double worst = 0; // largest fixed p * Lambda for |z| > 1
        for (double z = 0; z <= 10; z += 0.02) {
            for (double logR = -12; logR < 0; logR += 0.1) {
                double r = Math.exp(logR); // tau^2/(v + tau^2)
                double v = 1.0;
                double tau2 = r / (1 - r);
                MixtureSprt t = MixtureSprt.of(ALPHA, tau2);
                double fixedP = 2 * Normal.upperTail(z); // one-look two-sided p-value
                double ratio = fixedP / t.lookPValue(z, v);
                if (z > 1) {
                    worst = Math.max(worst, ratio);
                }
                assertTrue(ratio <= 1, "fixed p " + fixedP + " exceeds 1/Lambda at z = " + z + ", r = " + r);
                double fixedHalfWidth = Normal.upperQuantile(ALPHA / 2) * Math.sqrt(v);
                assertTrue(t.halfWidth(v) >= fixedHalfWidth, "confidence interval narrower than fixed Wald");
            }
        }
        double finalWorst = worst;
        // for |z| > 1 the Javadoc's bound 2 exp(-1/2)/(sqrt(2 pi) z^2) < 0.484
        assertTrue(worst < 0.484, () -> "Mills-ratio bound 2 exp(-1/2)/sqrt(2 pi) broken: " + finalWorst);
    }

    @Test
    void runningPValue_canFallBelowTheCurrentLooksFixedPValue_soThePropertyIsPerLookOnly() {
        MixtureSprt.State s = TEST.start().update(0.2, 0.002).update(0.0, 0.001);
        assertTrue(s.pValue() < 2 * Normal.upperTail(0.0), "earlier strong look keeps p below the current fixed p = 1");
    }

    @Test
    void state_isImmutableAndKeepsRunningMinimumAndIntersection() {
        MixtureSprt.State s0 = TEST.start();
        MixtureSprt.State s1 = s0.update(0.05, 0.002);
        MixtureSprt.State s2 = s1.update(0.01, 0.001);
        assertNotSame(s0, s1);
        assertEquals(0, s0.looks());
        assertEquals(1.0, s0.pValue(), 0.0);
        assertEquals(Interval.ALL, s0.interval());
        assertEquals(2, s2.looks());
        assertEquals(Math.min(TEST.lookPValue(0.05, 0.002), TEST.lookPValue(0.01, 0.001)), s2.pValue(), 0.0);
        Interval expected = TEST.confidenceInterval(0.05, 0.002).intersect(TEST.confidenceInterval(0.01, 0.001));
        assertEquals(expected, s2.interval());
        assertTrue(s1.pValue() >= s2.pValue(), "p-value never increases");
    }

    /**
     * Type-I error under continuous monitoring: 2000 seeded null streams, one observation per arm per
     * look (unit variance), 1000 looks, known variance v_n = 2/n. Ville's inequality gives at most alpha;
     * we allow alpha + 3 SE with SE = sqrt(alpha(1-alpha)/2000) ~ 0.0049. The same streams under a naive
     * z-test at every look must show the inflation that the mixture test prevents (a check that the
     * simulation can detect a too-liberal rule).
     */
    @Test
    void typeOneError_withKnownVarianceAnd1000Looks_isAtMostAlphaPlus3Se() {
        SplittableRandom rnd = new SplittableRandom(1970);
        int mixtureRejections = 0;
        int naiveRejections = 0;
        double zCrit = Normal.upperQuantile(ALPHA / 2);
        for (int stream = 0; stream < STREAMS; stream++) {
            double sum = 0;
            MixtureSprt.State state = TEST.start();
            boolean naive = false;
            for (int n = 1; n <= LOOKS; n++) {
                sum += gaussian(rnd) - gaussian(rnd);
                double v = 2.0 / n;
                double d = sum / n;
                state = state.update(d, v);
                naive |= Math.abs(d) / Math.sqrt(v) >= zCrit;
            }
            mixtureRejections += state.rejected() ? 1 : 0;
            naiveRejections += naive ? 1 : 0;
        }
        double rate = (double) mixtureRejections / STREAMS;
        double naiveRate = (double) naiveRejections / STREAMS;
        double se = Math.sqrt(ALPHA * (1 - ALPHA) / STREAMS);
        assertTrue(rate <= ALPHA + 3 * se, () -> String.format("mixture type-I %.4f > %.4f", rate, ALPHA + 3 * se));
        assertTrue(naiveRate > 0.2, () -> String.format("naive peeking should inflate far above alpha: %.4f", naiveRate));
    }

    /**
     * As above with variances plugged in from the running sample variances of both arms, as the daemon
     * does, with looks from 20 units per arm on (a plug-in variance from a handful of units is too noisy
     * to trust; the daemon's minimum-units setting plays this role). Approximate validity only (Johari et
     * al.); measured, with the same alpha + 3 SE allowance.
     */
    @Test
    void typeOneError_withPluggedInSampleVariances_isAtMostAlphaPlus3Se() {
        SplittableRandom rnd = new SplittableRandom(2017);
        int rejections = 0;
        for (int stream = 0; stream < STREAMS; stream++) {
            double st = 0, stt = 0, sc = 0, scc = 0;
            MixtureSprt.State state = TEST.start();
            for (int n = 1; n <= LOOKS; n++) {
                double t = 3 + 2 * gaussian(rnd); // basket value, sd 2
                double c = 3 + 2 * gaussian(rnd);
                st += t;
                stt += t * t;
                sc += c;
                scc += c * c;
                if (n >= 20) {
                    double vt = (stt - st * st / n) / (n - 1);
                    double vc = (scc - sc * sc / n) / (n - 1);
                    state = state.update(st / n - sc / n, (vt + vc) / n);
                }
            }
            rejections += state.rejected() ? 1 : 0;
        }
        double rate = (double) rejections / STREAMS;
        double se = Math.sqrt(ALPHA * (1 - ALPHA) / STREAMS);
        assertTrue(rate <= ALPHA + 3 * se, () -> String.format("plug-in type-I %.4f > %.4f", rate, ALPHA + 3 * se));
    }

    /**
     * Coverage of the confidence sequence: true difference 0.1 (metric sd 1 per arm), 2000 streams of 1000
     * looks; the running intersection must contain 0.1 at every look in at least 1 - alpha - 3 SE of streams.
     */
    @Test
    void confidenceSequence_coversTheTrueDifferenceAtAllLooks() {
        SplittableRandom rnd = new SplittableRandom(1939);
        double delta = 0.1;
        int misses = 0;
        for (int stream = 0; stream < STREAMS; stream++) {
            double sum = 0;
            MixtureSprt.State state = TEST.start();
            boolean missed = false;
            for (int n = 1; n <= LOOKS && !missed; n++) {
                sum += delta + gaussian(rnd) - gaussian(rnd);
                state = state.update(sum / n, 2.0 / n);
                missed = !state.interval().contains(delta);
            }
            misses += missed ? 1 : 0;
        }
        double rate = (double) misses / STREAMS;
        double se = Math.sqrt(ALPHA * (1 - ALPHA) / STREAMS);
        assertTrue(rate <= ALPHA + 3 * se, () -> String.format("non-coverage %.4f > %.4f", rate, ALPHA + 3 * se));
    }

    /** Not only valid but useful: a difference of 0.2 sd is found within 1000 looks in most streams. */
    @Test
    void power_againstADifferenceOfTwoTenthsSd_isHigh() {
        SplittableRandom rnd = new SplittableRandom(5);
        int rejections = 0;
        int streams = 500;
        for (int stream = 0; stream < streams; stream++) {
            double sum = 0;
            MixtureSprt.State state = TEST.start();
            for (int n = 1; n <= LOOKS && !state.rejected(); n++) {
                sum += 0.2 + gaussian(rnd) - gaussian(rnd);
                state = state.update(sum / n, 2.0 / n);
            }
            rejections += state.rejected() ? 1 : 0;
        }
        double rate = (double) rejections / streams;
        // fixed-horizon power at n = 1000 for 0.2 sd is ~0.9999 (z = 0.2/sqrt(0.002) = 4.47); the mixture
        // test pays for peeking but must still find it in most streams
        assertTrue(rate > 0.9, () -> "power " + rate);
    }

    @Test
    void badParameters_areRejectedWithTheRule() {
        assertMessage("alpha 1.0 not in (0, 1)", () -> MixtureSprt.of(1.0, 1));
        assertMessage("tau^2 0.0 must be finite and > 0", () -> MixtureSprt.of(0.05, 0));
        assertMessage("variance -1.0 must be finite and > 0", () -> TEST.logLikelihoodRatio(0, -1));
        assertMessage("difference NaN must be finite", () -> TEST.start().update(Double.NaN, 1));
    }

    static double gaussian(SplittableRandom rnd) {
        // Box-Muller (one of the pair): deterministic and allocation free
        double u = rnd.nextDouble();
        double w = rnd.nextDouble();
        return Math.sqrt(-2 * Math.log1p(-u)) * Math.cos(2 * Math.PI * w);
    }

    private static void assertMessage(String part, Runnable call) {
        StatsException e = assertThrows(StatsException.class, call::run);
        assertTrue(e.getMessage().contains(part), () -> "message was: " + e.getMessage());
    }
}
