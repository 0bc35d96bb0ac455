package dev.stopline.monitor;

import dev.stopline.wire.Outcome;
import dev.stopline.wire.PlanShape;
import dev.stopline.wire.Reason;
import dev.stopline.wire.Rejection;
import dev.stopline.wire.Snapshot;
import dev.stopline.wire.SnapshotParser;
import dev.stopline.wire.SnapshotSequencer;
import java.util.Objects;
import java.util.function.Function;

/**
 * One incoming record, start to end: parse, check order and shape against the plan and the last
 * accepted snapshot, evaluate. The Kafka consumer of the daemon and the offline {@code replay}
 * command both call {@link #process}; they differ only in where states live (database or memory).
 */
public final class Monitoring {
    private final SnapshotParser parser;
    private final Function<String, ExperimentMonitor> monitors;

    /**
     * @param parser   the wire parser (payload limit)
     * @param monitors the monitor of an experiment id, or null when no plan is registered
     */
    public Monitoring(SnapshotParser parser, Function<String, ExperimentMonitor> monitors) {
        this.parser = Objects.requireNonNull(parser, "parser");
        this.monitors = Objects.requireNonNull(monitors, "monitors");
    }

    /** What became of a record. */
    public sealed interface Step permits Rejected, Duplicate, Evaluated {
    }

    /** Not usable: belongs in the dead-letter topic with {@code rejection.reason().code()}. */
    public record Rejected(Rejection rejection, String experiment) implements Step {
    }

    /** A redelivery of the last accepted sequence: acknowledge, no look. */
    public record Duplicate(Snapshot snapshot) implements Step {
    }

    /** Accepted and evaluated. */
    public record Evaluated(Snapshot snapshot, ExperimentMonitor monitor, Evaluation evaluation) implements Step {
    }

    /**
     * @param value   the record's payload
     * @param key     the record's key (the experiment id), or null when there is none (a replayed file)
     * @param stateOf the stored state of an experiment, or null if it has none yet
     */
    public Step process(byte[] value, String key, Function<String, MonitorState> stateOf) {
        Outcome parsed = parser.parse(value, key);
        if (parsed instanceof Rejection r) {
            return new Rejected(r, key);
        }
        Snapshot snapshot = (Snapshot) parsed;
        ExperimentMonitor monitor = monitors.apply(snapshot.experiment());
        MonitorState state = monitor == null ? null : stateOf.apply(snapshot.experiment());
        if (monitor != null && state == null) {
            state = monitor.initialState();
        }
        PlanShape shape = monitor == null ? null : monitor.shape();
        Outcome checked = SnapshotSequencer.check(snapshot, state == null ? null : state.lastSnapshot(), shape);
        if (checked instanceof Rejection r) {
            return r.reason() == Reason.DUPLICATE ? new Duplicate(snapshot) : new Rejected(r, snapshot.experiment());
        }
        return new Evaluated(snapshot, monitor, monitor.evaluate(state, snapshot));
    }
}
