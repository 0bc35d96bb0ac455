/**
 * The wire format of incoming snapshots and its checks, as pure functions that return an
 * {@link dev.stopline.wire.Outcome}: a {@link dev.stopline.wire.Snapshot} to look at or a
 * {@link dev.stopline.wire.Rejection} with a stable {@link dev.stopline.wire.Reason} code.
 *
 * <ul>
 * <li>{@link dev.stopline.wire.SnapshotParser}: bytes (and the Kafka key) to a snapshot; syntax,
 *     shape and values.</li>
 * <li>{@link dev.stopline.wire.SnapshotSequencer}: a snapshot against the previous accepted one of
 *     its experiment and the plan's arms and metrics ({@link dev.stopline.wire.PlanShape}).</li>
 * <li>{@link dev.stopline.wire.SnapshotGate}: both, with the last accepted snapshot per experiment;
 *     for a consumer thread or an offline JSONL replay.</li>
 * </ul>
 * A Kafka consumer acknowledges every record; it dead-letters a rejection whose
 * {@code reason().deadLetter()} is true, with {@code reason().code()} as the header, and counts
 * every outcome by code. Nothing here depends on Kafka, Quarkus or the plan package.
 */
package dev.stopline.wire;
