package dev.stopline.wire;

/**
 * The extra sums of a ratio metric, where each unit contributes a numerator x and a denominator y
 * (clicks and page views): with the numerator sums of {@link MetricSums} they give the delta-method
 * variance of sum(x)/sum(y).
 *
 * @param denominatorSum          sum of y
 * @param denominatorSumOfSquares sum of y^2
 * @param sumOfProducts           sum of x*y
 */
public record RatioSums(double denominatorSum, double denominatorSumOfSquares, double sumOfProducts) {
}
