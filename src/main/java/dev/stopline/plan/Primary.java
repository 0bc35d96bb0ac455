package dev.stopline.plan;

/**
 * The primary metric and its sequential test.
 *
 * <p>Sizing: either {@code maxUnitsPerArm} is given, or the engine sizes the experiment from
 * {@code power}, {@code minimumEffect} and the baseline ({@code baselineRate} for a proportion,
 * {@code baselineMean} and {@code sd} for a mean or ratio). For {@code sprt} and {@code mixture-sprt}
 * the size is the horizon at which the test is truncated without a decision.
 *
 * @param metric         metric name as it appears in snapshots
 * @param type           proportion, mean or ratio
 * @param method         group-sequential, sprt or mixture-sprt
 * @param alpha          overall type I error, in (0, 1)
 * @param sides          1 (treatment better) or 2; default 2 (common practice)
 * @param spending       alpha-spending function (group-sequential), grammar of {@code SpendingFunction.of}
 * @param boundary       classical boundary (group-sequential, equally spaced looks); exactly one of spending/boundary
 * @param looks          planned information fractions (group-sequential)
 * @param maxUnitsPerArm maximum units per arm, or null when sized from power
 * @param power          target power in (alpha, 1) when sizing
 * @param minimumEffect  smallest difference worth detecting, absolute on the metric's scale
 * @param baselineRate   expected control rate (proportion), used for sizing and simulation
 * @param baselineMean   expected control mean (mean, ratio)
 * @param sd             expected per-unit standard deviation (mean, ratio)
 * @param futility       optional futility boundary by beta spending (group-sequential)
 * @param sprt           required for method sprt
 * @param mixtureSprt    required for method mixture-sprt
 */
public record Primary(
        String metric,
        MetricType type,
        Method method,
        Double alpha,
        Integer sides,
        String spending,
        Boundary boundary,
        Looks looks,
        Long maxUnitsPerArm,
        Double power,
        Double minimumEffect,
        Double baselineRate,
        Double baselineMean,
        Double sd,
        Futility futility,
        Sprt sprt,
        MixtureSprt mixtureSprt) {

    /** Default number of sides (two-sided test, common practice). */
    public static final int DEFAULT_SIDES = 2;
}
