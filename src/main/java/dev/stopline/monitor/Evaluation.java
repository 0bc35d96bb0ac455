package dev.stopline.monitor;

import java.util.List;

/**
 * The result of evaluating one accepted snapshot.
 *
 * @param state       the experiment's state after this snapshot
 * @param looks       one record per metric evaluated (the primary only at formal looks when group-sequential)
 * @param sampleRatio the sample-ratio check of this snapshot
 * @param alerts      crossings first seen at this snapshot
 */
public record Evaluation(MonitorState state, List<LookRecord> looks, SampleRatioRecord sampleRatio,
                         List<Alert> alerts) {
    public Evaluation {
        looks = List.copyOf(looks);
        alerts = List.copyOf(alerts);
    }
}
