package dev.stopline.wire;

import java.util.HashMap;
import java.util.Map;
import java.util.Objects;
import java.util.function.Function;

/**
 * Parser and sequencer together, with the one piece of state they need: the last accepted snapshot
 * per experiment. One gate per consumer thread (or per replayed file); not thread-safe. The Kafka
 * consumer calls {@link #offer(byte[], String)} with the record key; an offline replay of a JSONL
 * file calls {@link #offer(byte[], String)} with a null key, line by line.
 */
public final class SnapshotGate {
    private final SnapshotParser parser;
    private final Function<String, PlanShape> plans;
    private final Map<String, Snapshot> last = new HashMap<>();

    /**
     * @param parser the parser (payload limit)
     * @param plans  the plan shape of an experiment id, or null when no plan is loaded for it
     */
    public SnapshotGate(SnapshotParser parser, Function<String, PlanShape> plans) {
        this.parser = Objects.requireNonNull(parser, "parser");
        this.plans = Objects.requireNonNull(plans, "plans");
    }

    /** Parses and checks one record; an accepted snapshot becomes the new "previous" of its experiment. */
    public Outcome offer(byte[] value, String key) {
        Outcome parsed = parser.parse(value, key);
        if (!(parsed instanceof Snapshot s)) {
            return parsed;
        }
        Outcome checked = SnapshotSequencer.check(s, last.get(s.experiment()), plans.apply(s.experiment()));
        if (checked instanceof Snapshot accepted) {
            last.put(accepted.experiment(), accepted);
        }
        return checked;
    }

    /** The last accepted snapshot of an experiment, or null. */
    public Snapshot lastAccepted(String experiment) {
        return last.get(experiment);
    }
}
