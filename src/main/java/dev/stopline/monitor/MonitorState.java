package dev.stopline.monitor;

import dev.stopline.wire.Snapshot;
import java.util.List;
import java.util.Map;

/**
 * What the evaluator remembers about one experiment between snapshots. Immutable and plain (numbers,
 * lists, the last snapshot), so that the daemon can store it as JSON and a restarted or rebalanced
 * instance continues exactly where the last one stopped.
 *
 * @param experiment          experiment id
 * @param planVersion         version of the plan this state was evaluated under
 * @param snapshots           accepted snapshots so far
 * @param lastSnapshot        the last accepted snapshot (null before the first), for order and monotonicity checks
 * @param lookFractions       information fractions of the formal looks taken (group-sequential primary)
 * @param lookZ               z statistics at those looks
 * @param lookEfficacyZ       efficacy boundaries computed at those looks (the inference at a stop needs them)
 * @param cumulativeAlphaSpent alpha spent so far by the primary (the alpha ledger's last entry)
 * @param primaryDecision     the decision that ended the primary analysis, or null while it runs
 * @param primaryMixture      running mixture-SPRT state of the primary (mixture-sprt only)
 * @param guardrails          running state per guardrail metric
 * @param sampleRatioMismatch whether the last snapshot was in sample-ratio mismatch
 * @param sampleRatioEpisodes how many mismatch episodes have begun (each one alerts once)
 */
public record MonitorState(
        String experiment,
        int planVersion,
        long snapshots,
        Snapshot lastSnapshot,
        List<Double> lookFractions,
        List<Double> lookZ,
        List<Double> lookEfficacyZ,
        double cumulativeAlphaSpent,
        Decision primaryDecision,
        MixtureMemo primaryMixture,
        Map<String, MixtureMemo> guardrails,
        boolean sampleRatioMismatch,
        int sampleRatioEpisodes) {

    public MonitorState {
        lookFractions = List.copyOf(lookFractions);
        lookZ = List.copyOf(lookZ);
        lookEfficacyZ = List.copyOf(lookEfficacyZ);
        guardrails = Map.copyOf(guardrails);
    }

    /** The state of an experiment that has seen no snapshot. */
    public static MonitorState initial(String experiment, int planVersion) {
        return new MonitorState(experiment, planVersion, 0, null, List.of(), List.of(), List.of(), 0.0, null, null,
                Map.of(), false, 0);
    }

    /** Sequence of the last accepted snapshot, or -1. */
    public long lastSequence() {
        return lastSnapshot == null ? -1 : lastSnapshot.sequence();
    }

    /** Number of formal looks taken by a group-sequential primary. */
    public int looksTaken() {
        return lookFractions.size();
    }

    /**
     * The remembered part of a running mixture SPRT: enough to resume it.
     *
     * @param looks          looks taken
     * @param pValue         always-valid p-value (running minimum)
     * @param lower          running lower bound (confidence sequence; for a guardrail, of the harm)
     * @param upper          running upper bound (confidence sequence; unused by a guardrail)
     * @param alerted        whether this metric has already alerted
     */
    public record MixtureMemo(long looks, double pValue, double lower, double upper, boolean alerted) {
    }
}
