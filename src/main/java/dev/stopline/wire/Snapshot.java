package dev.stopline.wire;

import java.time.Instant;
import java.util.Map;

/**
 * One incoming snapshot: cumulative counts of every arm of one experiment since it started.
 * Wire format (JSON; the Kafka key is the experiment id):
 * <pre>{@code
 * {"experiment":"checkout-redesign","sequence":42,"observedAt":"2027-03-04T10:00:00Z",
 *  "arms":{"control":{"units":10234,"metrics":{"orders":{"sum":812,"sumOfSquares":812}}},
 *          "treatment":{"units":10187,"metrics":{"orders":{"sum":861,"sumOfSquares":861}}}}}
 * }</pre>
 * A ratio metric adds {@code denominatorSum}, {@code denominatorSumOfSquares} and {@code sumOfProducts}.
 *
 * @param experiment experiment id
 * @param sequence   producer's sequence number, increasing per experiment
 * @param observedAt when the counts were taken
 * @param arms       counts per arm, in the order received
 */
public record Snapshot(String experiment, long sequence, Instant observedAt, Map<String, ArmCounts> arms)
        implements Outcome {
    public Snapshot {
        arms = ReadOnlyMap.copyOf(arms);
    }
}
