/**
 * Estimators from per-arm sufficient statistics: proportions, means and ratios of means (delta
 * method), two-arm comparisons with Wald intervals, and the sample-ratio mismatch check.
 *
 * <p>Pure Java plus Commons Math; no framework imports. Every type is immutable.
 *
 * <p>References:
 * <ol>
 *   <li>Deng, A., Knoblich, U. and Lu, J. (2018). Applying the Delta Method in Metric Analytics: A
 *       Practical Guide with Novel Ideas. KDD 2018, 233-242. doi:10.1145/3219819.3219919</li>
 *   <li>Pearson, K. (1900). On the criterion that a given system of deviations from the probable in
 *       the case of a correlated system of variables is such that it can be reasonably supposed to
 *       have arisen from random sampling. Philosophical Magazine 50(302), 157-175.</li>
 * </ol>
 */
package dev.stopline.stats.estimate;
