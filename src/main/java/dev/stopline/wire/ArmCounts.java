package dev.stopline.wire;

import java.util.Map;

/**
 * Cumulative counts of one arm.
 *
 * @param units   units (visitors) assigned to the arm so far
 * @param metrics sums per metric name, in the order received
 */
public record ArmCounts(long units, Map<String, MetricSums> metrics) {
    public ArmCounts {
        metrics = ReadOnlyMap.copyOf(metrics);
    }
}
