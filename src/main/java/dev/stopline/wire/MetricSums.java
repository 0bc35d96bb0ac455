package dev.stopline.wire;

/**
 * Cumulative sums of one metric in one arm since the experiment started: enough for the mean and
 * variance (sum x, sum x^2) and, for a ratio metric, the covariance with its denominator.
 *
 * @param sum          sum of x over units
 * @param sumOfSquares sum of x^2 over units
 * @param ratio        denominator sums of a ratio metric, or null for a proportion or mean metric
 */
public record MetricSums(double sum, double sumOfSquares, RatioSums ratio) {
    /** Sums of a proportion or mean metric. */
    public static MetricSums of(double sum, double sumOfSquares) {
        return new MetricSums(sum, sumOfSquares, null);
    }

    /** Whether the record carries denominator sums. */
    public boolean isRatio() {
        return ratio != null;
    }
}
