package dev.stopline.plan;

/** How a metric is summarised per unit, which fixes the variance formula the engine uses. */
public enum MetricType {
    /** A 0/1 outcome per unit (converted or not); the estimate is a rate. */
    PROPORTION("proportion"),
    /** A real value per unit (revenue per visitor); the estimate is a mean. */
    MEAN("mean"),
    /** A ratio of two per-unit sums (clicks per page view); delta-method variance. */
    RATIO("ratio");

    private final String key;

    MetricType(String key) {
        this.key = key;
    }

    /** The spelling used in plan files. */
    public String key() {
        return key;
    }
}
