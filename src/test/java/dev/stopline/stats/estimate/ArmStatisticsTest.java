package dev.stopline.stats.estimate;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.stats.StatsException;
import java.util.SplittableRandom;
import org.apache.commons.math3.stat.correlation.Covariance;
import org.apache.commons.math3.stat.descriptive.DescriptiveStatistics;
import org.junit.jupiter.api.Test;

class ArmStatisticsTest {

    private static void assertMessage(String expectedPart, Runnable call) {
        StatsException e = assertThrows(StatsException.class, call::run);
        assertTrue(e.getMessage().contains(expectedPart), () -> "message was: " + e.getMessage());
    }

    @Test
    void of_negativeUnits_isRejectedWithTheRule() {
        assertMessage("units -1 must be >= 0", () -> ArmStatistics.of(-1, 0, 0));
    }

    @Test
    void of_nonFiniteSum_isRejectedWithTheRule() {
        assertMessage("sum NaN must be finite", () -> ArmStatistics.of(10, Double.NaN, 1));
        assertMessage("sumOfSquares Infinity must be finite and >= 0",
                () -> ArmStatistics.of(10, 1, Double.POSITIVE_INFINITY));
    }

    @Test
    void of_sumOfSquaresBelowSquaredSumOverN_isRejectedWithCauchySchwarz() {
        // 10 units summing to 10 have a sum of squares of at least 10^2/10 = 10
        assertMessage("Cauchy-Schwarz", () -> ArmStatistics.of(10, 10, 9.9));
    }

    @Test
    void of_sumOfSquaresBelowFloorByRoundingOnly_isAccepted() {
        // constant data: 1e6 units of 0.1; the accumulated sum of squares is off by rounding only
        double s = 0;
        double ss = 0;
        for (int i = 0; i < 1_000_000; i++) {
            s += 0.1;
            ss += 0.1 * 0.1;
        }
        ArmStatistics a = ArmStatistics.of(1_000_000, s, ss);
        assertTrue(a.sampleVariance() >= 0 && a.sampleVariance() < 1e-9,
                () -> "constant data have variance 0 up to rounding, got " + a.sampleVariance());
    }

    @Test
    void of_zeroUnitsWithNonZeroSums_isRejected() {
        assertMessage("with 0 units", () -> ArmStatistics.of(0, 1, 1));
    }

    @Test
    void binary_successesAboveUnits_isRejected() {
        assertMessage("successes 11 not in [0, units = 10]", () -> ArmStatistics.binary(10, 11));
    }

    @Test
    void ratio_sumOfProductsBreakingCauchySchwarz_isRejected() {
        // x = y = (0, 2): Sx = Sy = 2, Sxx = Syy = 4, centred 2 each; |Sxy - 2| must be <= 2
        assertMessage("breaks Cauchy-Schwarz", () -> ArmStatistics.ratio(2, 2, 4, 2, 4, 4.5));
        ArmStatistics ok = ArmStatistics.ratio(2, 2, 4, 2, 4, 4);
        assertEquals(2.0, ok.sampleCovariance(), 0.0, "cov of (0,2) with itself = var = 2, by hand");
    }

    @Test
    void ratioParts_missing_areReportedNotInvented() {
        assertMessage("ratio metric needs denominatorSum", () -> ArmStatistics.of(3, 1, 1).denominatorSum());
    }

    @Test
    void isBinary_distinguishesZeroOneFromNumericData() {
        assertTrue(ArmStatistics.binary(10, 3).isBinary());
        assertFalse(ArmStatistics.of(10, 3, 5).isBinary());
        assertFalse(ArmStatistics.of(10, 2.5, 2.5).isBinary(), "0/1 data sum to whole numbers");
    }

    @Test
    void moments_fromSeededRawData_matchCommonsMathDescriptiveStatistics() {
        SplittableRandom rnd = new SplittableRandom(20261201L);
        int n = 5000;
        double[] x = new double[n];
        double[] y = new double[n];
        double sx = 0, sxx = 0, sy = 0, syy = 0, sxy = 0;
        for (int i = 0; i < n; i++) {
            y[i] = 1 + rnd.nextInt(8); // page views per visitor
            x[i] = y[i] * 4.5 + 10 * rnd.nextDouble(); // basket value, correlated with page views
            sx += x[i];
            sxx += x[i] * x[i];
            sy += y[i];
            syy += y[i] * y[i];
            sxy += x[i] * y[i];
        }
        ArmStatistics a = ArmStatistics.ratio(n, sx, sxx, sy, syy, sxy);
        DescriptiveStatistics dx = new DescriptiveStatistics(x);
        DescriptiveStatistics dy = new DescriptiveStatistics(y);
        double cov = new Covariance().covariance(x, y); // Commons Math, unbiased
        // tolerance: the sum-of-squares formula loses ~log10((mean^2+var)/var) ~ 1.5 digits here, and the
        // sums accumulate n*eps ~ 1e-12 relative; 1e-10 relative leaves margin and still catches n vs n-1
        // (a 2e-4 relative difference at n = 5000)
        assertEquals(dx.getMean(), a.mean(), 1e-12 * Math.abs(dx.getMean()), "mean x");
        assertEquals(dx.getVariance(), a.sampleVariance(), 1e-10 * dx.getVariance(), "variance x");
        assertEquals(dy.getVariance(), a.denominatorSampleVariance(), 1e-10 * dy.getVariance(), "variance y");
        assertEquals(cov, a.sampleCovariance(), 1e-10 * Math.abs(cov), "covariance x y");
    }

    @Test
    void plus_ofTwoWindows_equalsStatisticsOfThePooledData() {
        ArmStatistics first = ArmStatistics.ratio(3, 6, 14, 4, 6, 9);   // x = 1,2,3; y = 1,1,2, by hand
        ArmStatistics second = ArmStatistics.ratio(2, 9, 41, 3, 5, 14); // x = 4,5;   y = 1,2, by hand
        ArmStatistics both = first.plus(second);
        assertEquals(5, both.units());
        assertEquals(15.0, both.sum(), 0.0, "1+2+3+4+5, by hand");
        assertEquals(55.0, both.sumOfSquares(), 0.0, "1+4+9+16+25, by hand");
        assertEquals(23.0, both.sumOfProducts(), 0.0, "9 + 14, by hand");
        assertEquals(7.0, both.denominatorSum(), 0.0, "4 + 3, by hand");
    }
}
