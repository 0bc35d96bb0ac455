package dev.stopline.plan;

/**
 * A guardrail: a metric that may stop the experiment because the treatment harms it by more than
 * {@code margin}, tested with an always-valid mixture SPRT so it can be checked at every snapshot.
 *
 * @param metric   metric name as it appears in snapshots
 * @param type     proportion, mean or ratio
 * @param harmful  which direction is harm
 * @param margin   tolerated harm, &gt;= 0; relative to the control value if {@code relative}
 * @param relative whether {@code margin} (and {@code tau}) are fractions of the control value; default false
 * @param alpha    level of the harm test; default 0.01
 * @param tau      mixing standard deviation on the scale of {@code margin}; optional, see {@link #mixingSd()}
 */
public record Guardrail(
        String metric,
        MetricType type,
        Harm harmful,
        Double margin,
        Boolean relative,
        Double alpha,
        Double tau) {

    /** Default level of a guardrail test. */
    public static final double DEFAULT_ALPHA = 0.01;

    /**
     * The mixing standard deviation actually used: {@code tau} if given, otherwise the margin.
     * A harm just beyond the margin is the effect the guardrail exists to catch, and a mixing sd of
     * the order of the effects of interest is what Johari et al. (2017) recommend. With margin 0
     * there is no scale to borrow, so the plan must give tau (the validator says so).
     */
    public Double mixingSd() {
        return tau != null ? tau : margin;
    }
}
