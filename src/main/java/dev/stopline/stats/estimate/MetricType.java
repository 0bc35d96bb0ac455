package dev.stopline.stats.estimate;

/**
 * How a metric's per-arm estimate and its variance are formed from {@link ArmStatistics}.
 */
public enum MetricType {
    /** A 0/1 metric per unit (converted or not): {@link ArmEstimate#proportion(ArmStatistics)}. */
    PROPORTION,
    /** A numeric metric per unit (revenue per visitor): {@link ArmEstimate#mean(ArmStatistics)}. */
    MEAN,
    /**
     * A ratio of two per-unit sums whose denominator is not the randomisation unit (clicks per page
     * view, randomised by visitor): {@link ArmEstimate#ratio(ArmStatistics)}.
     */
    RATIO;

    /** The estimate of this metric type for one arm. */
    public ArmEstimate estimate(ArmStatistics arm) {
        switch (this) {
            case PROPORTION:
                return ArmEstimate.proportion(arm);
            case MEAN:
                return ArmEstimate.mean(arm);
            default:
                return ArmEstimate.ratio(arm);
        }
    }
}
