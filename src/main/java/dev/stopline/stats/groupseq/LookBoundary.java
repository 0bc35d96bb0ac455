package dev.stopline.stats.groupseq;

/**
 * The boundary of one look on the Z scale.
 *
 * @param look                  1-based look number
 * @param informationFraction   t_k = I_k / I_max (may exceed 1 for an overrun final look)
 * @param efficacyZ             stop for efficacy when Z_k &gt;= efficacyZ (two-sided: also when
 *                              Z_k &lt;= -efficacyZ); +infinity when nothing is spent at this look
 * @param futilityZ             one-sided: stop for futility when Z_k &lt;= futilityZ; two-sided: stop
 *                              when |Z_k| &lt;= futilityZ (inner region); NaN when the design has none
 * @param cumulativeAlphaSpent  type I error spent by this look, both sides when two-sided
 * @param nominalPValue         tail of efficacyZ: 1 - Phi(z) one-sided, 2 (1 - Phi(z)) two-sided
 * @param cumulativeBetaSpent   type II error spent by this look; NaN without futility
 */
public record LookBoundary(int look, double informationFraction, double efficacyZ, double futilityZ,
                           double cumulativeAlphaSpent, double nominalPValue, double cumulativeBetaSpent) {
}
