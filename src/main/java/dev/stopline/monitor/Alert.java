package dev.stopline.monitor;

import java.time.Instant;

/**
 * A crossing that people must hear about, raised once. The {@link #id()} is stable for the crossing
 * ({@code experiment/kind/metric/look}), so storage and every delivery channel can deduplicate on it.
 *
 * @param id         stable id
 * @param experiment experiment id
 * @param kind       efficacy, futility, guardrail or sample-ratio
 * @param metric     the metric concerned (null for sample-ratio)
 * @param lookNumber formal look number for efficacy and futility; the episode number (1, 2, ...) for
 *                   sample-ratio; null for guardrails (a guardrail alerts once)
 * @param sequence   snapshot sequence that crossed
 * @param observedAt when that snapshot's counts were taken
 * @param summary    one sentence for a person on call
 * @param evidence   the look that crossed (null for sample-ratio)
 * @param sampleRatio the sample-ratio check (sample-ratio alerts only)
 */
public record Alert(
        String id,
        String experiment,
        AlertKind kind,
        String metric,
        Integer lookNumber,
        long sequence,
        Instant observedAt,
        String summary,
        LookRecord evidence,
        SampleRatioRecord sampleRatio) {

    /** The stable id of a crossing. */
    public static String idOf(String experiment, AlertKind kind, String metric, Integer look) {
        return experiment + "/" + kind.wireName() + "/" + (metric == null ? "-" : metric)
                + "/" + (look == null ? "-" : look.toString());
    }
}
