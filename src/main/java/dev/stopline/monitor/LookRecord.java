package dev.stopline.monitor;

import java.time.Instant;

/**
 * One evaluation of one metric at one snapshot: everything needed to explain and replay it.
 * Fields that do not apply to the metric's method are null (a guardrail has no efficacy boundary,
 * a mixture SPRT has no alpha ledger, a group-sequential look has no always-valid p-value).
 *
 * @param experiment           experiment id
 * @param sequence             snapshot sequence number
 * @param observedAt           when the snapshot's counts were taken
 * @param metric               metric name
 * @param role                 {@code primary} or {@code guardrail}
 * @param method               {@code group-sequential}, {@code sprt}, {@code mixture-sprt}; guardrails: {@code mixture-sprt}
 * @param look                 formal look number k (1-based; group-sequential only, and SPRT snapshot count)
 * @param plannedLooks         K, the planned number of looks (group-sequential only)
 * @param informationFraction  effective units over the plan's maximum, {@code n_c n_t/(n_c+n_t)} scale
 * @param controlValue         control arm estimate (rate, mean or ratio)
 * @param treatmentValue       treatment arm estimate
 * @param estimate             treatment minus control
 * @param standardError        standard error of the difference
 * @param z                    estimate / standard error
 * @param relativeDifference   treatment / control - 1
 * @param efficacyZ            upper efficacy boundary on the z scale (two-sided: lower is its negative)
 * @param futilityZ            futility boundary on the z scale
 * @param cumulativeAlphaSpent alpha spent up to and including this look (both sides when two-sided)
 * @param nominalPValue        the fixed-sample p-value of z, for reference only: not valid under repeated looks
 * @param alwaysValidPValue    mixture-SPRT p-value, valid at any stopping time
 * @param intervalLower        lower end of the interval valid under repeated looks (repeated CI or confidence sequence)
 * @param intervalUpper        upper end of that interval
 * @param adjustedPValue       stage-wise-ordering adjusted p-value, computed when the primary stops
 * @param medianUnbiasedEstimate median-unbiased estimate under stage-wise ordering, when the primary stops
 * @param conditionalPowerCurrent conditional power under the current estimate (group-sequential, while continuing)
 * @param conditionalPowerDesign  conditional power under the design effect (group-sequential, while continuing)
 * @param margin               guardrail margin on the difference scale (absolute, after a relative margin is applied)
 * @param decision             what the look concluded
 */
public record LookRecord(
        String experiment,
        long sequence,
        Instant observedAt,
        String metric,
        String role,
        String method,
        Integer look,
        Integer plannedLooks,
        double informationFraction,
        Double controlValue,
        Double treatmentValue,
        Double estimate,
        Double standardError,
        Double z,
        Double relativeDifference,
        Double efficacyZ,
        Double futilityZ,
        Double cumulativeAlphaSpent,
        Double nominalPValue,
        Double alwaysValidPValue,
        Double intervalLower,
        Double intervalUpper,
        Double adjustedPValue,
        Double medianUnbiasedEstimate,
        Double conditionalPowerCurrent,
        Double conditionalPowerDesign,
        Double margin,
        Decision decision) {

    public static final String PRIMARY = "primary";
    public static final String GUARDRAIL = "guardrail";
}
