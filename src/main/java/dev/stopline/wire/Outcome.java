package dev.stopline.wire;

/**
 * What became of one incoming record: a {@link Snapshot} to look at, or a {@link Rejection}.
 * Every function of this package returns one of the two and never throws on bad input.
 */
public sealed interface Outcome permits Snapshot, Rejection {
    /** Whether this is a snapshot to use. */
    default boolean accepted() {
        return this instanceof Snapshot;
    }
}
