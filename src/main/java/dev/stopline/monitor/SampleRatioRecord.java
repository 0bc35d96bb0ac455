package dev.stopline.monitor;

import java.util.Map;

/**
 * The sample-ratio check of one snapshot: chi-square goodness of fit of the observed units per arm
 * against the planned allocation.
 *
 * @param sequence  snapshot sequence number
 * @param units     observed units per arm
 * @param chiSquare the statistic
 * @param pValue    its p-value
 * @param threshold the plan's threshold (0.001 by default: common practice)
 * @param mismatch  {@code pValue < threshold}
 */
public record SampleRatioRecord(long sequence, Map<String, Long> units, double chiSquare, double pValue,
                                double threshold, boolean mismatch) {
}
