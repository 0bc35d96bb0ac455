package dev.stopline.stats.groupseq;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.stats.StatsException;
import org.apache.commons.math3.distribution.NormalDistribution;
import org.junit.jupiter.api.Test;

class SampleSizeTest {
    /** Commons Math quantiles, computed independently of dev.stopline.stats.Normal. */
    private static final NormalDistribution STD = new NormalDistribution(0, 1);
    private static final double Z975 = STD.inverseCumulativeProbability(0.975);
    private static final double Z80 = STD.inverseCumulativeProbability(0.80);

    @Test
    void proportions_tenVersusTwelvePercent_matchesUnpooledFormulaWithCommonsMathQuantiles() {
        SampleSize.Arms arms = SampleSize.of(0.05, 2, 0.8).proportions(0.10, 0.12);
        // unpooled formula (z_.975 + z_.8)^2 (0.09 + 0.1056) / 0.02^2 with Commons Math quantiles = 3838.10
        double expected = Math.pow(Z975 + Z80, 2) * (0.10 * 0.90 + 0.12 * 0.88) / (0.02 * 0.02);
        assertEquals(expected, arms.control(), 1e-9 * expected, "relative 1e-9 (quantile agreement)");
        assertEquals(3838.10, arms.control(), 0.005, "hand calculation to 2 decimals");
        assertEquals(3839, arms.perArmUnits());
        assertEquals(arms.control(), arms.treatment(), 0.0, "50/50 split");
    }

    @Test
    void proportions_tenVersusTwelvePercent_withinQuarterPercentOfFleissPooledFormula() {
        // Fleiss, Levin & Paik (2003) ch. 4 without continuity correction (pooled variance on the z_a term):
        // [z_a sqrt(2 pbar qbar) + z_b sqrt(p0 q0 + p1 q1)]^2 / d^2 = 3840.85, published widely as 3841 (from memory)
        double pbar = 0.11;
        double fleiss = Math.pow(Z975 * Math.sqrt(2 * pbar * (1 - pbar))
                + Z80 * Math.sqrt(0.10 * 0.90 + 0.12 * 0.88), 2) / (0.02 * 0.02);
        assertEquals(3841, (long) Math.ceil(fleiss), "Fleiss value as published (from memory)");
        double ours = SampleSize.of(0.05, 2, 0.8).proportions(0.10, 0.12).control();
        double rel = Math.abs(ours - fleiss) / fleiss;
        assertTrue(rel < 0.0025, "unpooled vs pooled relative difference " + rel);
    }

    @Test
    void means_twoSided05Power80_isFifteenPointSeventyTimesSdSquaredOverDSquared() {
        // common practice: n = 2 (z_.975 + z_.8)^2 sd^2 / d^2 = 15.70 sd^2 / d^2
        double sd = 3.0;
        double d = 0.75;
        double n = SampleSize.of(0.05, 2, 0.8).means(sd, d).control();
        assertEquals(15.6978, n * d * d / (sd * sd), 5e-5, "coefficient to 4 decimals (hand calculation)");
        // d = 0.5 sd -> 62.79, i.e. 63 per arm (normal approximation; common practice)
        assertEquals(63, SampleSize.of(0.05, 2, 0.8).means(1.0, 0.5).perArmUnits());
    }

    @Test
    void oneSided_usesZOneMinusAlpha() {
        // one-sided 0.025 has the same critical value as two-sided 0.05 (common practice)
        double one = SampleSize.of(0.025, 1, 0.9).means(1, 0.2).control();
        double two = SampleSize.of(0.05, 2, 0.9).means(1, 0.2).control();
        assertEquals(two, one, 1e-9 * two);
        double expected = 2 * Math.pow(STD.inverseCumulativeProbability(0.975)
                + STD.inverseCumulativeProbability(0.9), 2) / 0.04; // Commons Math quantiles
        assertEquals(expected, one, 1e-9 * expected);
    }

    @Test
    void allocationRatio_twoToOne_givesDifferenceVarianceOfTheFixedTest() {
        SampleSize.Arms arms = SampleSize.of(0.05, 2, 0.8).withAllocationRatio(2).proportions(0.10, 0.12);
        // hand calculation: (z_a + z_b)^2 (0.09 + 0.1056 / 2) / 0.0004 = 2802.05
        assertEquals(2802.05, arms.control(), 0.005);
        assertEquals(2 * arms.control(), arms.treatment(), 1e-9 * arms.treatment());
        // defining property: Var(p1hat - p0hat) = (d / (z_a + z_b))^2
        double var = 0.09 / arms.control() + 0.1056 / arms.treatment();
        double target = Math.pow(0.02 / (Z975 + Z80), 2);
        assertEquals(target, var, 1e-9 * target);
    }

    @Test
    void groupSequential_inflatesTheUnroundedFixedSizeAndRoundsOnce() {
        // R = 1.0247 is the K = 5 O'Brien-Fleming inflation factor at 0.05/0.8 (J&T 2000 Table 2.3, from memory)
        assertEquals(3933, SampleSize.groupSequential(3838.10219, 1.0247)); // 3932.90 -> 3933
        assertEquals(100, SampleSize.groupSequential(50.0, 2.0), "exact products do not round up");
        assertEquals(787, SampleSize.atFraction(0.2, 3933)); // 786.6 -> 787
        assertEquals(3933, SampleSize.atFraction(1.0, 3933));
    }

    @Test
    void ratio_usesDeltaMethodUnitVariance() {
        RatioMoments m = RatioMoments.of(new double[] {0, 1, 2, 0, 1}, new double[] {1, 2, 4, 1, 3});
        double d = 0.1 * m.ratio();
        double expected = Math.pow(Z975 + Z80, 2) * 2 * m.unitVariance() / (d * d);
        assertEquals(expected, SampleSize.of(0.05, 2, 0.8).ratio(m, d).control(), 1e-9 * expected);
    }

    @Test
    void badArguments_stateTheRule() {
        StatsException e = assertThrows(StatsException.class, () -> SampleSize.of(0.05, 3, 0.8));
        assertEquals("sides 3 not in [1, 2]", e.getMessage());
        e = assertThrows(StatsException.class, () -> SampleSize.of(0.05, 2, 0.8).proportions(0.1, 0.1));
        assertEquals("difference to detect must be non-zero", e.getMessage());
        e = assertThrows(StatsException.class, () -> SampleSize.of(0.05, 2, Double.NaN));
        assertEquals("power NaN not in (0, 1)", e.getMessage());
        assertThrows(StatsException.class, () -> SampleSize.of(0.05, 2, 0.8).proportions(0.1, 1.1));
    }
}
