package dev.stopline.stats.estimate;

import dev.stopline.stats.StatsException;

/**
 * The estimate of a metric in one arm and the estimated variance of that estimate (not of the data).
 *
 * @param value the point estimate
 * @param variance the estimated variance of {@code value}
 * @param units the number of randomisation units behind it
 */
public record ArmEstimate(double value, double variance, long units) {

    /** Standard error, {@code sqrt(variance)}. */
    public double standardError() {
        return Math.sqrt(variance);
    }

    /**
     * Proportion of a 0/1 metric: {@code p = S/n}, {@code var p = p (1 - p) / n} (binomial variance with
     * the estimate plugged in).
     *
     * @throws StatsException if {@code n = 0} or the statistics are not those of a 0/1 metric
     *     ({@code sum = sumOfSquares <= n}, whole)
     */
    public static ArmEstimate proportion(ArmStatistics arm) {
        if (!arm.isBinary()) {
            throw new StatsException("a 0/1 metric has sum = sumOfSquares <= units (whole); got sum %s, "
                    + "sumOfSquares %s, units %d", arm.sum(), arm.sumOfSquares(), arm.units());
        }
        double p = arm.mean();
        return new ArmEstimate(p, p * (1 - p) / arm.units(), arm.units());
    }

    /**
     * Sample mean {@code xbar = S/n} with variance {@code s^2 / n}, where
     * {@code s^2 = (Sxx - S^2/n)/(n - 1)} is the unbiased sample variance.
     *
     * @throws StatsException if {@code n < 2}
     */
    public static ArmEstimate mean(ArmStatistics arm) {
        arm.requireUnits(2);
        return new ArmEstimate(arm.mean(), arm.sampleVariance() / arm.units(), arm.units());
    }

    /**
     * Ratio of means {@code R = xbar / ybar} with the delta-method variance of Deng, Knoblich and Lu
     * (2018, Section 3, KDD):
     *
     * <pre>
     *   var(xbar / ybar) ~ (1/n) ( s_x^2 / mu_y^2  -  2 mu_x s_xy / mu_y^3  +  mu_x^2 s_y^2 / mu_y^4 )
     * </pre>
     *
     * <p>a first-order Taylor expansion of {@code f(a, b) = a / b} at the means, with sample moments
     * (unbiased, divisor {@code n - 1}) plugged in for {@code s_x^2}, {@code s_y^2}, {@code s_xy}.
     * It is computed in the equal form {@code (s_x^2 - 2 R s_xy + R^2 s_y^2) / (n mu_y^2)}, the sample
     * variance of the linearised values {@code x - R y} over {@code n mu_y^2}, which is never negative
     * in exact arithmetic (a rounded negative is clamped to 0).
     * Valid when the unit of randomisation is the unit of the sums (users), so that units are
     * independent while the page views inside a unit are not.
     *
     * @throws StatsException if the statistics have no ratio parts, {@code n < 2}, or {@code ybar = 0}
     */
    public static ArmEstimate ratio(ArmStatistics arm) {
        arm.requireUnits(2);
        double my = arm.denominatorMean();
        if (my == 0) {
            throw new StatsException("ratio metric needs a denominator mean != 0; got 0 over %d units", arm.units());
        }
        double mx = arm.mean();
        double r = mx / my;
        double v = (arm.sampleVariance() - 2 * r * arm.sampleCovariance()
                + r * r * arm.denominatorSampleVariance()) / (my * my);
        return new ArmEstimate(r, Math.max(0.0, v) / arm.units(), arm.units());
    }
}
