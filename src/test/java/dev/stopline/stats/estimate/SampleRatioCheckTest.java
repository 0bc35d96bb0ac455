package dev.stopline.stats.estimate;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.stats.StatsException;
import org.apache.commons.math3.stat.inference.ChiSquareTest;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;
import org.junit.jupiter.api.Test;

class SampleRatioCheckTest {
    private static final ChiSquareTest REFERENCE = new ChiSquareTest(); // Commons Math

    @ParameterizedTest(name = "weights {0}, observed {1}")
    @CsvSource(delimiter = ';', value = {
            "0.5 0.5; 5050 4950",
            "0.5 0.5; 50600 49400",
            "0.5 0.5; 12 7",
            "0.9 0.1; 8950 1050",
            "0.25 0.25 0.5; 2510 2440 5050",
            "0.2 0.2 0.2 0.2 0.2; 2000 2100 1900 2050 1700",
            "0.5 0.5; 100000 90000"})
    void pValue_matchesCommonsMathChiSquareTestTo1e12(String weightText, String observedText) {
        double[] w = parseDoubles(weightText);
        long[] o = parseLongs(observedText);
        long total = 0;
        for (long x : o) {
            total += x;
        }
        double[] expected = new double[w.length];
        for (int i = 0; i < w.length; i++) {
            expected[i] = w[i] * total;
        }
        SampleRatioCheck.Result r = SampleRatioCheck.withWeights(w).test(o);
        double p = REFERENCE.chiSquareTest(expected, o);
        double x2 = REFERENCE.chiSquare(expected, o);
        assertEquals(p, r.pValue(), 1e-12, "p-value vs Commons Math ChiSquareTest");
        assertEquals(x2, r.chiSquare(), 1e-12 * Math.max(1, x2), "statistic vs Commons Math ChiSquareTest");
        assertEquals(w.length - 1, r.degreesOfFreedom());
        assertEquals(p < SampleRatioCheck.DEFAULT_THRESHOLD, r.mismatch());
    }

    @Test
    void mismatch_flagsAGrossImbalanceAndNotABalancedSplit() {
        // checkout-redesign: 50/50 planned
        assertTrue(SampleRatioCheck.equalSplit(2).test(50_600, 49_400).mismatch(), "chi2 = 14.4, p ~ 1.5e-4");
        assertFalse(SampleRatioCheck.equalSplit(2).test(50_100, 49_900).mismatch(), "chi2 = 0.4");
        assertFalse(SampleRatioCheck.equalSplit(2).withThreshold(1e-4).test(50_600, 49_400).mismatch(),
                "p ~ 1.5e-4 is above a stricter threshold 1e-4");
    }

    @Test
    void badInput_isRejectedWithTheRule() {
        assertMessage("sum to 1.1, must sum to 1 within 1.0E-9", () -> SampleRatioCheck.withWeights(0.6, 0.5));
        assertMessage("at least 2 arms", () -> SampleRatioCheck.withWeights(1.0));
        assertMessage("weight of arm 1 0.0 must be finite and > 0", () -> SampleRatioCheck.withWeights(1.0, 0.0));
        assertMessage("got 3 arm counts for 2 allocation weights", () -> SampleRatioCheck.equalSplit(2).test(1, 2, 3));
        assertMessage("no units observed yet", () -> SampleRatioCheck.equalSplit(2).test(0, 0));
        assertMessage("units of arm 0 (-1) must be >= 0", () -> SampleRatioCheck.equalSplit(2).test(-1, 5));
        assertMessage("mismatch threshold 0.0 not in (0, 1)", () -> SampleRatioCheck.equalSplit(2).withThreshold(0));
    }

    @Test
    void weights_summingToOneWithinRounding_areAccepted() {
        double third = 1.0 / 3;
        assertEquals(3, SampleRatioCheck.withWeights(third, third, third).arms());
    }

    private static void assertMessage(String part, Runnable call) {
        StatsException e = assertThrows(StatsException.class, call::run);
        assertTrue(e.getMessage().contains(part), () -> "message was: " + e.getMessage());
    }

    private static double[] parseDoubles(String s) {
        String[] parts = s.trim().split("\\s+");
        double[] out = new double[parts.length];
        for (int i = 0; i < parts.length; i++) {
            out[i] = Double.parseDouble(parts[i]);
        }
        return out;
    }

    private static long[] parseLongs(String s) {
        String[] parts = s.trim().split("\\s+");
        long[] out = new long[parts.length];
        for (int i = 0; i < parts.length; i++) {
            out[i] = Long.parseLong(parts[i]);
        }
        return out;
    }
}
