package dev.stopline.plan;

/**
 * The sample-ratio-mismatch check: a test that the observed split of units matches the allocation.
 *
 * @param alpha level of the check; default 0.001 (common practice: a mismatch alarm must be rare
 *              under a healthy split because it is checked at every snapshot)
 */
public record SampleRatio(Double alpha) {
    /** Default level (common practice). */
    public static final double DEFAULT_ALPHA = 0.001;

    /** The check at its default level. */
    public static SampleRatio defaults() {
        return new SampleRatio(DEFAULT_ALPHA);
    }
}
