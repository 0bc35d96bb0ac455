package dev.stopline.stats.groupseq;

import dev.stopline.stats.Check;
import dev.stopline.stats.StatsException;

/**
 * Sufficient statistics of a ratio metric from pilot data, and the delta-method variance of its ratio of
 * means.
 *
 * <p>Each randomisation unit {@code i} (e.g. a visitor) contributes a numerator {@code Y_i} (orders) and a
 * denominator {@code X_i} (sessions); the metric is {@code R = mean(Y) / mean(X)}. Because the units of
 * analysis (sessions) are not the units of randomisation (visitors), the naive binomial variance is wrong;
 * the first-order Taylor expansion (delta method) gives [1, sec. 3]
 *
 * <pre>
 *   Var(mean(Y) / mean(X)) ~= (1 / n) * (s_YY - 2 R s_XY + R^2 s_XX) / mean(X)^2
 * </pre>
 *
 * with {@code s_YY, s_XX, s_XY} the sample (n - 1) variances and covariance. {@link #unitVariance()} is the
 * bracket divided by {@code mean(X)^2}, i.e. {@code n} times the variance of the ratio, and plays the role
 * of the per-unit variance in {@link SampleSize}.
 *
 * <p>References:
 * <ol>
 *   <li>Deng A, Knoblich U, Lu J (2018). Applying the Delta Method in Metric Analytics: A Practical Guide
 *       with Novel Ideas. Proc. 24th ACM SIGKDD, 233-242. doi:10.1145/3219819.3219919</li>
 * </ol>
 *
 * @param n                      number of units, at least 2
 * @param sumNumerator           sum of {@code Y_i}
 * @param sumDenominator         sum of {@code X_i}, must be > 0
 * @param sumNumeratorSquares    sum of {@code Y_i^2}
 * @param sumDenominatorSquares  sum of {@code X_i^2}
 * @param sumProducts            sum of {@code X_i Y_i}
 */
public record RatioMoments(long n, double sumNumerator, double sumDenominator, double sumNumeratorSquares,
                           double sumDenominatorSquares, double sumProducts) {

    public RatioMoments {
        if (n < 2) {
            throw new StatsException("ratio pilot needs n >= 2 units (got %d)", n);
        }
        Check.finite("sum of numerators", sumNumerator);
        Check.positive("sum of denominators", sumDenominator);
        Check.nonNegative("sum of squared numerators", sumNumeratorSquares);
        Check.nonNegative("sum of squared denominators", sumDenominatorSquares);
        Check.finite("sum of products", sumProducts);
    }

    /** Accumulates the sums from paired arrays (numerator, denominator per unit). */
    public static RatioMoments of(double[] numerators, double[] denominators) {
        if (numerators.length != denominators.length) {
            throw new StatsException("numerators (%d) and denominators (%d) must pair up",
                    numerators.length, denominators.length);
        }
        double sy = 0, sx = 0, syy = 0, sxx = 0, sxy = 0;
        for (int i = 0; i < numerators.length; i++) {
            double y = numerators[i];
            double x = denominators[i];
            sy += y;
            sx += x;
            syy += y * y;
            sxx += x * x;
            sxy += x * y;
        }
        return new RatioMoments(numerators.length, sy, sx, syy, sxx, sxy);
    }

    /** {@code R = sum Y / sum X}. */
    public double ratio() {
        return sumNumerator / sumDenominator;
    }

    /** Sample variance of the numerators. */
    public double numeratorVariance() {
        return centred(sumNumeratorSquares, sumNumerator, sumNumerator);
    }

    /** Sample variance of the denominators. */
    public double denominatorVariance() {
        return centred(sumDenominatorSquares, sumDenominator, sumDenominator);
    }

    /** Sample covariance of numerator and denominator. */
    public double covariance() {
        return centred(sumProducts, sumNumerator, sumDenominator);
    }

    /** {@code (s_YY - 2 R s_XY + R^2 s_XX) / mean(X)^2}: n times the delta-method variance of the ratio. */
    public double unitVariance() {
        double r = ratio();
        double meanX = sumDenominator / n;
        double bracket = numeratorVariance() - 2 * r * covariance() + r * r * denominatorVariance();
        // The bracket is the variance of Y - R X, so it is >= 0 up to rounding.
        return Math.max(bracket, 0.0) / (meanX * meanX);
    }

    /** Delta-method variance of {@link #ratio()} itself: {@code unitVariance() / n}. */
    public double ratioVariance() {
        return unitVariance() / n;
    }

    private double centred(double sumOfProducts, double sumA, double sumB) {
        return (sumOfProducts - sumA * sumB / n) / (n - 1);
    }
}
