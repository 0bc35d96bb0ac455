package dev.stopline.stats.sprt;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.stats.StatsException;
import java.util.SplittableRandom;
import org.apache.commons.math3.distribution.BinomialDistribution;
import org.apache.commons.math3.distribution.NormalDistribution;
import org.apache.commons.math3.stat.descriptive.SummaryStatistics;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;

class WaldSprtTest {
    // common practice: alpha 0.05, power 0.9
    private static final WaldSprt TEST = WaldSprt.of(0.05, 0.10);
    // guardrail: a payment error rate of 10% is acceptable, 15% is not
    private static final WaldSprt.Bernoulli RATE = TEST.bernoulli(0.10, 0.15);

    @Test
    void thresholds_areWaldsExactly() {
        WaldSprt t = WaldSprt.of(0.05, 0.20);
        assertEquals(Math.log(16.0), t.logUpper(), 0.0, "Wald (1947): A = (1 - 0.2)/0.05 = 16");
        assertEquals(Math.log(0.2 / 0.95), t.logLower(), 0.0, "Wald (1947): B = 0.2/(1 - 0.05)");
    }

    @Test
    void decide_atAndAroundTheThresholds() {
        assertEquals(SprtDecision.ACCEPT_H1, TEST.decide(TEST.logUpper()));
        assertEquals(SprtDecision.CONTINUE, TEST.decide(Math.nextDown(TEST.logUpper())));
        assertEquals(SprtDecision.ACCEPT_H0, TEST.decide(TEST.logLower()));
        assertEquals(SprtDecision.CONTINUE, TEST.decide(Math.nextUp(TEST.logLower())));
        assertThrows(StatsException.class, () -> TEST.decide(Double.NaN));
    }

    @Test
    void bernoulliLogLikelihoodRatio_equalsRatioOfCommonsMathBinomialLogProbabilities() {
        for (int n : new int[] {1, 17, 250}) {
            for (int s = 0; s <= n; s += Math.max(1, n / 7)) {
                double expected = new BinomialDistribution(null, n, 0.15).logProbability(s)
                        - new BinomialDistribution(null, n, 0.10).logProbability(s); // Commons Math
                assertEquals(expected, RATE.logLikelihoodRatio(s, n), 1e-9 * Math.max(1, Math.abs(expected)),
                        "n=" + n + " s=" + s);
            }
        }
    }

    @Test
    void normalDifferenceLogLikelihoodRatio_equalsRatioOfCommonsMathNormalLogDensities() {
        WaldSprt.NormalDifference diff = TEST.normalDifference(0.02);
        double v = 0.0001;
        for (double d : new double[] {-0.05, 0, 0.01, 0.013, 0.04}) {
            double sd = Math.sqrt(v);
            double expected = new NormalDistribution(null, 0.02, sd, 1e-9).logDensity(d)
                    - new NormalDistribution(null, 0, sd, 1e-9).logDensity(d); // Commons Math
            assertEquals(expected, diff.logLikelihoodRatio(d, v), 1e-9 * Math.max(1, Math.abs(expected)), "d=" + d);
        }
        assertEquals(SprtDecision.ACCEPT_H1, diff.decide(0.04, v), "LLR = (0.0008 - 0.0002)/1e-4 = 6 > ln 18");
    }

    @Test
    void operatingCharacteristic_atTheTwoHypotheses_isOneMinusAlphaAndBeta() {
        // Wald (1947): h(p0) = 1 gives OC = 1 - alpha, h(p1) = -1 gives OC = beta
        assertEquals(1.0, RATE.h(0.10), 1e-10, "h(p0)");
        assertEquals(-1.0, RATE.h(0.15), 1e-10, "h(p1)");
        assertEquals(0.95, RATE.operatingCharacteristic(0.10), 1e-10, "OC(p0) = 1 - alpha");
        assertEquals(0.10, RATE.operatingCharacteristic(0.15), 1e-10, "OC(p1) = beta");
    }

    /** Wald's (1947) parametric form: for each h, p(h) = (1 - b^h)/(a^h - b^h) and OC = (A^h - 1)/(A^h - B^h). */
    @ParameterizedTest(name = "h = {0}")
    @ValueSource(doubles = {-6, -2.5, -0.7, -0.05, 0.03, 0.4, 1.8, 5})
    void operatingCharacteristic_matchesWaldsParametricFormulaDirectly(double h) {
        double a = 0.15 / 0.10;
        double b = 0.85 / 0.90;
        double p = (1 - Math.pow(b, h)) / (Math.pow(a, h) - Math.pow(b, h));
        double bigA = 0.90 / 0.05;
        double bigB = 0.10 / 0.95;
        double oc = (Math.pow(bigA, h) - 1) / (Math.pow(bigA, h) - Math.pow(bigB, h));
        int[] evaluations = {0};
        double solved = RATE.h(p, evaluations);
        assertEquals(h, solved, 1e-8 * Math.max(1, Math.abs(h)), "h recovered from p = " + p);
        assertTrue(evaluations[0] <= 40, "evaluations of Wald's equation: " + evaluations[0]);
        assertEquals(oc, RATE.operatingCharacteristic(p), 1e-9, "OC at p = " + p);
        double z = p * Math.log(a) + (1 - p) * Math.log(b);
        double asn = (oc * Math.log(bigB) + (1 - oc) * Math.log(bigA)) / z; // Wald (1947) ASN
        assertEquals(asn, RATE.averageSampleNumber(p), 1e-7 * asn, "ASN at p = " + p);
    }

    @Test
    void averageSampleNumber_isContinuousThroughTheZeroDriftRate() {
        // E_p[z] = 0 at p* = -ln b / (ln a - ln b); Wald's limit there is -ln A ln B / E[z^2]
        double lnA = Math.log(1.5);
        double lnB = Math.log(0.85 / 0.90);
        double pStar = -lnB / (lnA - lnB);
        double limit = RATE.averageSampleNumber(pStar);
        double second = pStar * lnA * lnA + (1 - pStar) * lnB * lnB;
        assertEquals(-Math.log(18) * Math.log(0.10 / 0.95) / second, limit, 1e-9 * limit, "Wald (1947) limit");
        assertEquals(limit, RATE.averageSampleNumber(pStar + 1e-6), 1e-4 * limit, "right of p*");
        assertEquals(limit, RATE.averageSampleNumber(pStar - 1e-6), 1e-4 * limit, "left of p*");
        double oc = RATE.operatingCharacteristic(pStar + 1e-9);
        assertEquals(Math.log(18) / (Math.log(18) - Math.log(0.10 / 0.95)), oc, 1e-6, "OC limit ln A/(ln A - ln B)");
    }

    /**
     * Seeded simulation of the test itself (20000 runs per rate, decisions from {@link WaldSprt.Bernoulli}).
     *
     * <p>Wald's OC and ASN neglect the overshoot of Z beyond the thresholds, so they are not the exact
     * values and "within 3 SE of Wald's value" would be a claim about the overshoot, not about our code.
     * What is exact is Wald's identity E[exp(h Z_N)] = 1: at an upper exit Z_N lies in [ln A, ln A + u)
     * and at a lower exit in (ln B + l, ln B], u and l the largest up and down steps; OC = (U - 1)/(U - L)
     * increases in both U = E[e^{hZ}|upper] and L = E[e^{hZ}|lower] for either sign of h, so the true OC
     * lies between Wald's formula with thresholds (ln A, ln B + l) and (ln A + u, ln B). The simulated OC
     * must fall in that bracket widened by 3 SE. Likewise E[Z_N] = E[N] E[z] (exact) gives
     * |E[N] - ASN_Wald| <= ((OC_hi - OC_lo)(ln A - ln B) + max(u, -l)) / |E[z]|; the simulated mean N must lie
     * within that plus 3 SE. The simulation is checked on its own by Wald's identity, within 3 SE.
     */
    @ParameterizedTest(name = "true rate {0}")
    @ValueSource(doubles = {0.08, 0.10, 0.125, 0.15, 0.18})
    void simulation_agreesWithWaldsOcAndAsnWithinOvershootBoundsAnd3Se(double p) {
        SplittableRandom rnd = new SplittableRandom(1947 + Math.round(p * 1000));
        int runs = 20_000;
        int acceptH0 = 0;
        SummaryStatistics n = new SummaryStatistics();
        SummaryStatistics identity = new SummaryStatistics();
        double step = RATE.expectedStep(p);
        for (int r = 0; r < runs; r++) {
            long s = 0;
            long t = 0;
            SprtDecision decision = SprtDecision.CONTINUE;
            while (decision == SprtDecision.CONTINUE) {
                t++;
                s += rnd.nextDouble() < p ? 1 : 0;
                decision = RATE.decide(s, t);
            }
            acceptH0 += decision == SprtDecision.ACCEPT_H0 ? 1 : 0;
            n.addValue(t);
            identity.addValue(RATE.logLikelihoodRatio(s, t) - t * step);
        }
        double ocSim = (double) acceptH0 / runs;
        double ocSe = Math.sqrt(ocSim * (1 - ocSim) / runs);
        double up = Math.max(RATE.successStep(), RATE.failureStep());
        double down = Math.min(RATE.successStep(), RATE.failureStep());
        double h = RATE.h(p);
        double ocLo = WaldSprt.Bernoulli.oc(h, TEST.logUpper(), TEST.logLower() + down);
        double ocHi = WaldSprt.Bernoulli.oc(h, TEST.logUpper() + up, TEST.logLower());
        double ocWald = RATE.operatingCharacteristic(p);
        String ocReport = String.format("p=%.3f OC sim %.4f +- %.4f, Wald %.4f, overshoot bracket [%.4f, %.4f]",
                p, ocSim, ocSe, ocWald, ocLo, ocHi);
        assertTrue(ocLo <= ocWald && ocWald <= ocHi, ocReport);
        assertTrue(ocSim >= ocLo - 3 * ocSe && ocSim <= ocHi + 3 * ocSe, ocReport);

        double identitySe = identity.getStandardDeviation() / Math.sqrt(runs);
        assertEquals(0.0, identity.getMean(), 3 * identitySe, "Wald's identity E[Z_N - N E z] = 0 in the simulation");

        if (Math.abs(step) > 0.002) { // the bound divides by |E z|: skip the zero-drift rate 0.1236
            double asnWald = RATE.averageSampleNumber(p);
            double bound = ((ocHi - ocLo) * (TEST.logUpper() - TEST.logLower()) + Math.max(up, -down)) / Math.abs(step);
            double nSe = n.getStandardDeviation() / Math.sqrt(runs);
            assertEquals(asnWald, n.getMean(), bound + 3 * nSe, String.format(
                    "p=%.3f ASN sim %.2f +- %.2f, Wald %.2f, overshoot allowance %.2f", p, n.getMean(), nSe, asnWald, bound));
        }
    }

    @Test
    void badParameters_areRejectedWithTheRule() {
        assertMessage("alpha + beta = 1.1 must be < 1", () -> WaldSprt.of(0.6, 0.5));
        assertMessage("p0 and p1 must differ", () -> TEST.bernoulli(0.1, 0.1));
        assertMessage("delta1 must not be 0", () -> TEST.normalDifference(0));
        assertMessage("successes 5 not in [0, trials = 4]", () -> RATE.logLikelihoodRatio(5, 4));
        assertMessage("variance 0.0 must be finite and > 0", () -> TEST.normalDifference(1).logLikelihoodRatio(1, 0));
    }

    private static void assertMessage(String part, Runnable call) {
        StatsException e = assertThrows(StatsException.class, call::run);
        assertTrue(e.getMessage().contains(part), () -> "message was: " + e.getMessage());
    }
}
