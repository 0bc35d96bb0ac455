package dev.stopline.stats.estimate;

import dev.stopline.stats.Check;
import dev.stopline.stats.Normal;
import dev.stopline.stats.StatsException;

/**
 * Two-arm comparison, treatment minus control, on the normal approximation.
 *
 * <ul>
 *   <li>Absolute difference {@code D = t - c}, unpooled standard error {@code se = sqrt(var_t + var_c)},
 *       {@code z = D / se}, two-sided p-value {@code 2 (1 - Phi(|z|))}, Wald interval
 *       {@code D -/+ z_{(1+level)/2} se}.</li>
 *   <li>Relative difference (lift) {@code L = t / c - 1} with the delta-method variance for independent
 *       arms (Deng, Knoblich and Lu 2018, KDD): {@code var L ~ var_t / c^2 + t^2 var_c / c^4}, and its
 *       Wald interval. NaN when the control estimate is 0 (the lift is undefined).</li>
 *   <li>Information {@code 1 / se^2}, whose ratio to the planned maximum is the information fraction
 *       of group-sequential designs (Lan and DeMets 1983, Biometrika 70(3), 659-663).</li>
 *   <li>Effective sample size {@code n_c n_t / (n_c + n_t)}: the information per unit variance, equal
 *       to {@code n/2} in a 50/50 split of {@code n} units.</li>
 * </ul>
 *
 * @param control the control arm's estimate
 * @param treatment the treatment arm's estimate
 * @param confidenceLevel level of both intervals, in (0, 1)
 * @param difference {@code t - c}
 * @param standardError unpooled standard error of the difference
 * @param z {@code difference / standardError}
 * @param pValue two-sided p-value of {@code z}
 * @param lower lower Wald bound of the difference
 * @param upper upper Wald bound of the difference
 * @param relativeDifference {@code t / c - 1}
 * @param relativeStandardError delta-method standard error of the relative difference
 * @param relativeLower lower Wald bound of the relative difference
 * @param relativeUpper upper Wald bound of the relative difference
 * @param information {@code 1 / standardError^2}
 * @param effectiveSampleSize {@code n_c n_t / (n_c + n_t)}
 */
public record Comparison(ArmEstimate control, ArmEstimate treatment, double confidenceLevel,
                         double difference, double standardError, double z, double pValue,
                         double lower, double upper,
                         double relativeDifference, double relativeStandardError,
                         double relativeLower, double relativeUpper,
                         double information, double effectiveSampleSize) {

    /** Common practice: 95% two-sided intervals. */
    public static final double DEFAULT_CONFIDENCE_LEVEL = 0.95;

    /**
     * Compares the estimates of the metric type in both arms.
     *
     * @throws StatsException as the estimator of {@code type} does, or as {@link #of(ArmEstimate, ArmEstimate, double)}
     */
    public static Comparison of(MetricType type, ArmStatistics control, ArmStatistics treatment,
                                double confidenceLevel) {
        return of(type.estimate(control), type.estimate(treatment), confidenceLevel);
    }

    /**
     * Compares two independent arm estimates.
     *
     * @throws StatsException if the level is not in (0, 1), or both variances are 0 (no test is possible:
     *     both arms are constant so far)
     */
    public static Comparison of(ArmEstimate control, ArmEstimate treatment, double confidenceLevel) {
        Check.openUnit("confidence level", confidenceLevel);
        double variance = control.variance() + treatment.variance();
        if (!(variance > 0 && variance < Double.POSITIVE_INFINITY)) {
            throw new StatsException("variance of the difference %s must be finite and > 0 (both arms constant "
                    + "so far?)", variance);
        }
        double se = Math.sqrt(variance);
        double d = treatment.value() - control.value();
        double z = d / se;
        double p = Math.min(1.0, 2 * Normal.upperTail(Math.abs(z)));
        double q = Normal.upperQuantile((1 - confidenceLevel) / 2);
        double c = control.value();
        double lift = c == 0 ? Double.NaN : treatment.value() / c - 1;
        double liftSe = c == 0 ? Double.NaN : Math.sqrt(liftVariance(control, treatment));
        long nc = control.units();
        long nt = treatment.units();
        return new Comparison(control, treatment, confidenceLevel, d, se, z, p, d - q * se, d + q * se,
                lift, liftSe, lift - q * liftSe, lift + q * liftSe, 1 / variance,
                (double) nc * nt / ((double) nc + nt));
    }

    private static double liftVariance(ArmEstimate control, ArmEstimate treatment) {
        double c2 = control.value() * control.value();
        double t = treatment.value();
        return treatment.variance() / c2 + t * t * control.variance() / (c2 * c2);
    }
}
