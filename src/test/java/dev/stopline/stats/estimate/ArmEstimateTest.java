package dev.stopline.stats.estimate;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.stats.StatsException;
import java.util.SplittableRandom;
import org.apache.commons.math3.stat.descriptive.DescriptiveStatistics;
import org.junit.jupiter.api.Test;

class ArmEstimateTest {

    @Test
    void proportion_fromSeededConversions_matchesCommonsMathMeanAndBinomialVariance() {
        SplittableRandom rnd = new SplittableRandom(7);
        int n = 20_000;
        DescriptiveStatistics raw = new DescriptiveStatistics();
        long successes = 0;
        for (int i = 0; i < n; i++) {
            int converted = rnd.nextDouble() < 0.031 ? 1 : 0; // checkout conversion ~3.1%
            raw.addValue(converted);
            successes += converted;
        }
        ArmEstimate e = MetricType.PROPORTION.estimate(ArmStatistics.binary(n, successes));
        double p = raw.getMean(); // Commons Math
        // the binomial variance p(1-p)/n equals the population (divisor n) variance of 0/1 data over n
        double expectedVariance = raw.getPopulationVariance() / n;
        assertEquals(p, e.value(), 1e-15, "proportion");
        assertEquals(expectedVariance, e.variance(), 1e-12 * expectedVariance, "variance of p");
        assertEquals(n, e.units());
    }

    @Test
    void mean_fromSeededRevenue_matchesCommonsMathSampleVarianceOverN() {
        SplittableRandom rnd = new SplittableRandom(11);
        int n = 3000;
        DescriptiveStatistics raw = new DescriptiveStatistics();
        double s = 0;
        double ss = 0;
        for (int i = 0; i < n; i++) {
            // revenue per visitor: 0 for most, a skewed basket value for buyers
            double x = rnd.nextDouble() < 0.2 ? 15 - 12 * Math.log(rnd.nextDouble()) : 0;
            raw.addValue(x);
            s += x;
            ss += x * x;
        }
        ArmEstimate e = MetricType.MEAN.estimate(ArmStatistics.of(n, s, ss));
        double expectedVariance = raw.getVariance() / n; // Commons Math unbiased variance
        // 1e-10 relative: cancellation in Sxx - S^2/n costs about one digit here (see ArmStatistics)
        assertEquals(raw.getMean(), e.value(), 1e-13 * raw.getMean(), "mean");
        assertEquals(expectedVariance, e.variance(), 1e-10 * expectedVariance, "variance of the mean");
    }

    /**
     * Delta method against the bootstrap. Visitors (the randomisation unit) see 1 + Poisson-like page
     * views and click on each with a visitor-specific rate, so clicks and views are correlated within a
     * visitor, which is exactly what the delta method must handle.
     *
     * <p>Tolerance: with B resamples the bootstrap variance has relative standard error about
     * sqrt((2 + excess kurtosis)/B); we estimate it from the replicates themselves (about 1.4% at
     * B = 10000) and allow 5%, which is over 3 of those standard errors, plus room for the delta method's
     * O(1/n) higher-order terms (n = 2000). With 2000 resamples the same standard error would be ~3.2%
     * and 5% would be only 1.6 of them, so we use 10000.
     */
    @Test
    void ratio_deltaMethodVariance_agreesWithSeededBootstrapWithin5Percent() {
        SplittableRandom rnd = new SplittableRandom(2018);
        int n = 2000;
        double[] clicks = new double[n];
        double[] views = new double[n];
        for (int i = 0; i < n; i++) {
            double rate = 0.05 + 0.3 * rnd.nextDouble();
            int v = 1 + geometric(rnd, 0.25);
            int c = 0;
            for (int k = 0; k < v; k++) {
                c += rnd.nextDouble() < rate ? 1 : 0;
            }
            clicks[i] = c;
            views[i] = v;
        }
        ArmEstimate delta = MetricType.RATIO.estimate(statistics(clicks, views));

        int resamples = 10_000;
        DescriptiveStatistics boot = new DescriptiveStatistics();
        SplittableRandom b = new SplittableRandom(99);
        for (int r = 0; r < resamples; r++) {
            double sx = 0;
            double sy = 0;
            for (int i = 0; i < n; i++) {
                int j = b.nextInt(n);
                sx += clicks[j];
                sy += views[j];
            }
            boot.addValue(sx / sy);
        }
        double bootVariance = boot.getVariance();
        double relativeSe = Math.sqrt((2 + boot.getKurtosis()) / resamples);
        double relativeError = delta.variance() / bootVariance - 1;
        assertTrue(3 * relativeSe < 0.05, () -> "tolerance must exceed 3 bootstrap SEs; SE = " + relativeSe);
        assertTrue(Math.abs(relativeError) < 0.05, () -> String.format(
                "delta %.6g vs bootstrap %.6g: relative error %.4f (bootstrap relative SE %.4f)",
                delta.variance(), bootVariance, relativeError, relativeSe));
    }

    @Test
    void ratio_withUnitDenominators_reducesToTheMean() {
        // ratio of sum x over a count of units is the mean: same variance s^2/n
        ArmStatistics a = ArmStatistics.ratio(4, 10, 30, 4, 4, 10); // x = 1,2,3,4; y = 1 each, by hand
        ArmEstimate r = ArmEstimate.ratio(a);
        ArmEstimate m = ArmEstimate.mean(a);
        assertEquals(2.5, r.value(), 0.0, "10/4, by hand");
        assertEquals(m.variance(), r.variance(), 1e-15, "delta-method variance with constant y = s^2/n");
        assertEquals(5.0 / 3 / 4, m.variance(), 1e-15, "var(1,2,3,4) = 5/3, over n = 4, by hand");
    }

    @Test
    void estimates_withBadInput_sayWhatIsWrong() {
        StatsException p = assertThrows(StatsException.class,
                () -> ArmEstimate.proportion(ArmStatistics.of(10, 3, 5)));
        assertTrue(p.getMessage().contains("a 0/1 metric has sum = sumOfSquares <= units"), p.getMessage());
        StatsException m = assertThrows(StatsException.class, () -> ArmEstimate.mean(ArmStatistics.of(1, 3, 9)));
        assertTrue(m.getMessage().contains("needs at least 2 units, has 1"), m.getMessage());
        StatsException r = assertThrows(StatsException.class,
                () -> ArmEstimate.ratio(ArmStatistics.ratio(2, 1, 1, 0, 0, 0)));
        assertTrue(r.getMessage().contains("denominator mean != 0"), r.getMessage());
        StatsException z = assertThrows(StatsException.class, () -> ArmEstimate.proportion(ArmStatistics.binary(0, 0)));
        assertTrue(z.getMessage().contains("needs at least 1 units, has 0"), z.getMessage());
    }

    static ArmStatistics statistics(double[] x, double[] y) {
        double sx = 0, sxx = 0, sy = 0, syy = 0, sxy = 0;
        for (int i = 0; i < x.length; i++) {
            sx += x[i];
            sxx += x[i] * x[i];
            sy += y[i];
            syy += y[i] * y[i];
            sxy += x[i] * y[i];
        }
        return ArmStatistics.ratio(x.length, sx, sxx, sy, syy, sxy);
    }

    private static int geometric(SplittableRandom rnd, double p) {
        return (int) Math.floor(Math.log(1 - rnd.nextDouble()) / Math.log1p(-p));
    }
}
