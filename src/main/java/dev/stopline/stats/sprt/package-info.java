/**
 * Sequential probability ratio tests: Wald's SPRT for a Bernoulli rate and for a normal difference,
 * and the mixture SPRT with always-valid p-values and confidence sequences.
 *
 * <p>Pure Java plus Commons Math; no framework imports. Every type is immutable.
 *
 * <p>References:
 * <ol>
 *   <li>Wald, A. (1947). Sequential Analysis. Wiley, New York.</li>
 *   <li>Robbins, H. (1970). Statistical methods related to the law of the iterated logarithm. Annals of
 *       Mathematical Statistics 41(5), 1397-1409.</li>
 *   <li>Ville, J. (1939). Etude critique de la notion de collectif. Gauthier-Villars, Paris.</li>
 *   <li>Johari, R., Koomen, P., Pekelis, L. and Walsh, D. (2017). Peeking at A/B tests: why it matters,
 *       and what to do about it. KDD 2017, 1517-1525; and Johari, R., Pekelis, L. and Walsh, D.,
 *       Always valid inference: continuous monitoring of A/B tests (arXiv 1512.04922; Operations
 *       Research, 2022). Bibliographic details from memory.</li>
 * </ol>
 */
package dev.stopline.stats.sprt;
