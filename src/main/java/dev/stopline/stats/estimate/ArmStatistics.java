package dev.stopline.stats.estimate;

import dev.stopline.stats.Check;
import dev.stopline.stats.StatsException;

/**
 * Sufficient statistics of one arm: the number of randomisation units {@code n}, the sum and the sum
 * of squares of the per-unit metric {@code x}, and for ratio metrics the sum and sum of squares of
 * the per-unit denominator {@code y} and the sum of products {@code x y}.
 *
 * <p>These are all that the proportion, mean and delta-method ratio estimators need, and they add up
 * across time windows and partitions ({@link #plus(ArmStatistics)}), so the daemon can keep one per
 * arm and never hold raw data.
 *
 * <p>Numerical note. Centred sums are formed as {@code sumOfSquares - sum^2/n}, which loses about
 * {@code log10((mean^2 + var) / var)} decimal digits to cancellation. For business metrics (coefficient
 * of variation of order 0.1 or larger) this costs at most two or three of sixteen digits. A centred
 * sum that rounds below zero is clamped to zero. The factories accept sums of squares that fall below
 * {@code sum^2/n} by at most {@value #ROUNDING} relative, which covers accumulated rounding of
 * long-running sums of constant data, and reject anything larger.
 */
public final class ArmStatistics {
    /** Relative slack allowed for rounding in the Cauchy-Schwarz checks. */
    static final double ROUNDING = 1e-8;

    private final long units;
    private final double sum;
    private final double sumOfSquares;
    private final boolean ratio;
    private final double denominatorSum;
    private final double denominatorSumOfSquares;
    private final double sumOfProducts;

    private ArmStatistics(long units, double sum, double sumOfSquares, boolean ratio,
                          double denominatorSum, double denominatorSumOfSquares, double sumOfProducts) {
        this.units = units;
        this.sum = sum;
        this.sumOfSquares = sumOfSquares;
        this.ratio = ratio;
        this.denominatorSum = denominatorSum;
        this.denominatorSumOfSquares = denominatorSumOfSquares;
        this.sumOfProducts = sumOfProducts;
    }

    /**
     * Statistics of a per-unit metric.
     *
     * @throws StatsException if {@code units < 0}, a sum is not finite, or
     *     {@code sumOfSquares < sum^2 / units} beyond rounding
     */
    public static ArmStatistics of(long units, double sum, double sumOfSquares) {
        checkUnits(units);
        checkMoments("sum", "sumOfSquares", units, sum, sumOfSquares);
        return new ArmStatistics(units, sum, sumOfSquares, false, Double.NaN, Double.NaN, Double.NaN);
    }

    /**
     * Statistics of a 0/1 metric: {@code sum = sumOfSquares = successes}.
     *
     * @throws StatsException unless {@code 0 <= successes <= units}
     */
    public static ArmStatistics binary(long units, long successes) {
        checkUnits(units);
        if (successes < 0 || successes > units) {
            throw new StatsException("successes %d not in [0, units = %d]", successes, units);
        }
        return new ArmStatistics(units, successes, successes, false, Double.NaN, Double.NaN, Double.NaN);
    }

    /**
     * Statistics of a ratio metric {@code sum x / sum y} over units.
     *
     * @throws StatsException if a moment check of {@link #of} fails for x or y, or the sum of products
     *     breaks Cauchy-Schwarz: {@code (Sxy - Sx Sy / n)^2 <= (Sxx - Sx^2/n)(Syy - Sy^2/n)} beyond rounding
     */
    public static ArmStatistics ratio(long units, double sum, double sumOfSquares, double denominatorSum,
                                      double denominatorSumOfSquares, double sumOfProducts) {
        checkUnits(units);
        checkMoments("sum", "sumOfSquares", units, sum, sumOfSquares);
        checkMoments("denominatorSum", "denominatorSumOfSquares", units, denominatorSum, denominatorSumOfSquares);
        Check.finite("sumOfProducts", sumOfProducts);
        checkProducts(units, sum, sumOfSquares, denominatorSum, denominatorSumOfSquares, sumOfProducts);
        return new ArmStatistics(units, sum, sumOfSquares, true, denominatorSum, denominatorSumOfSquares,
                sumOfProducts);
    }

    /** The statistics of both windows together (sums add). Ratio parts are kept only if both have them. */
    public ArmStatistics plus(ArmStatistics other) {
        long n = Math.addExact(units, other.units);
        if (ratio && other.ratio) {
            return ratio(n, sum + other.sum, sumOfSquares + other.sumOfSquares,
                    denominatorSum + other.denominatorSum,
                    denominatorSumOfSquares + other.denominatorSumOfSquares, sumOfProducts + other.sumOfProducts);
        }
        return of(n, sum + other.sum, sumOfSquares + other.sumOfSquares);
    }

    public long units() {
        return units;
    }

    public double sum() {
        return sum;
    }

    public double sumOfSquares() {
        return sumOfSquares;
    }

    /** Whether denominator sums and the sum of products are present. */
    public boolean hasRatioParts() {
        return ratio;
    }

    public double denominatorSum() {
        requireRatio();
        return denominatorSum;
    }

    public double denominatorSumOfSquares() {
        requireRatio();
        return denominatorSumOfSquares;
    }

    public double sumOfProducts() {
        requireRatio();
        return sumOfProducts;
    }

    /** Whether the statistics can come from a 0/1 metric: {@code sum = sumOfSquares <= units}. */
    public boolean isBinary() {
        return sum == sumOfSquares && sum <= units && sum == Math.rint(sum);
    }

    /** Sample mean of x, {@code sum / n}. */
    public double mean() {
        requireUnits(1);
        return sum / units;
    }

    /** Unbiased sample variance of x, {@code (Sxx - Sx^2/n) / (n - 1)}. */
    public double sampleVariance() {
        requireUnits(2);
        return centred(sumOfSquares, sum, sum) / (units - 1);
    }

    /** Sample mean of the denominator y. */
    public double denominatorMean() {
        requireRatio();
        requireUnits(1);
        return denominatorSum / units;
    }

    /** Unbiased sample variance of the denominator y. */
    public double denominatorSampleVariance() {
        requireRatio();
        requireUnits(2);
        return centred(denominatorSumOfSquares, denominatorSum, denominatorSum) / (units - 1);
    }

    /** Unbiased sample covariance of x and y, {@code (Sxy - Sx Sy / n) / (n - 1)}. */
    public double sampleCovariance() {
        requireRatio();
        requireUnits(2);
        return (sumOfProducts - sum * denominatorSum / units) / (units - 1);
    }

    private double centred(double squares, double a, double b) {
        return Math.max(0.0, squares - a * b / units);
    }

    void requireUnits(long minimum) {
        if (units < minimum) {
            throw new StatsException("needs at least %d units, has %d", minimum, units);
        }
    }

    private void requireRatio() {
        if (!ratio) {
            throw new StatsException("ratio metric needs denominatorSum, denominatorSumOfSquares and "
                    + "sumOfProducts; these statistics have none");
        }
    }

    private static void checkUnits(long units) {
        if (units < 0) {
            throw new StatsException("units %d must be >= 0", units);
        }
    }

    private static void checkMoments(String sumName, String squaresName, long units, double s, double ss) {
        Check.finite(sumName, s);
        Check.nonNegative(squaresName, ss);
        if (units == 0) {
            if (s != 0 || ss != 0) {
                throw new StatsException("with 0 units %s (%s) and %s (%s) must be 0", sumName, s, squaresName, ss);
            }
            return;
        }
        double floor = s * s / units;
        if (ss < floor - ROUNDING * Math.max(ss, floor)) {
            throw new StatsException("%s %s below %s^2/units = %s: a sum of squares is at least the squared "
                    + "sum over the count (Cauchy-Schwarz), up to relative rounding %s", squaresName, ss, sumName,
                    floor, ROUNDING);
        }
    }

    private static void checkProducts(long n, double sx, double sxx, double sy, double syy, double sxy) {
        if (n == 0) {
            if (sxy != 0) {
                throw new StatsException("with 0 units sumOfProducts (%s) must be 0", sxy);
            }
            return;
        }
        double cxy = sxy - sx * sy / n;
        double bound = Math.max(0, sxx - sx * sx / n) * Math.max(0, syy - sy * sy / n);
        double scale = Math.max(Math.abs(sxx * syy), sxy * sxy);
        if (cxy * cxy > bound + 4 * ROUNDING * scale) {
            throw new StatsException("sumOfProducts %s breaks Cauchy-Schwarz: (Sxy - Sx Sy/n)^2 = %s exceeds "
                    + "(Sxx - Sx^2/n)(Syy - Sy^2/n) = %s", sxy, cxy * cxy, bound);
        }
    }

    @Override
    public String toString() {
        return ratio
                ? String.format(java.util.Locale.ROOT, "ArmStatistics[n=%d, Sx=%s, Sxx=%s, Sy=%s, Syy=%s, Sxy=%s]",
                units, sum, sumOfSquares, denominatorSum, denominatorSumOfSquares, sumOfProducts)
                : String.format(java.util.Locale.ROOT, "ArmStatistics[n=%d, Sx=%s, Sxx=%s]", units, sum, sumOfSquares);
    }
}
