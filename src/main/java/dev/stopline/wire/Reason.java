package dev.stopline.wire;

/**
 * Why a snapshot was not used for a look. The {@link #code()} is stable: it is the dead-letter
 * header value and a metric label, so it never changes once released.
 */
public enum Reason {
    /** Not JSON at all: syntax error, empty payload, duplicate field, bad encoding. */
    MALFORMED_JSON("malformed-json", true),
    /** Valid JSON of the wrong shape: a field missing, unknown or of the wrong JSON type. */
    SCHEMA("schema", true),
    /** The Kafka key is not the experiment named in the payload. */
    KEY_MISMATCH("key-mismatch", true),
    /** A field has the right type but an impossible value: NaN, negative, fractional units, sums that contradict each other, absurdly large. */
    INVALID_VALUE("invalid-value", true),
    /** The payload is over the size limit, or over a parser limit (nesting, string or number length). */
    TOO_LARGE("too-large", true),
    /** Same sequence as the last accepted snapshot: a redelivery. Acknowledge, take no look, do not dead-letter. */
    DUPLICATE("duplicate", false),
    /** Lower sequence than the last accepted snapshot. */
    OUT_OF_ORDER("out-of-order", true),
    /** Units or a sum went down although snapshots are cumulative. */
    DECREASING_COUNT("decreasing-count", true),
    /** No plan is loaded for this experiment. */
    UNKNOWN_EXPERIMENT("unknown-experiment", true),
    /** The snapshot has an arm the plan does not allocate. */
    UNKNOWN_ARM("unknown-arm", true),
    /** The snapshot lacks an arm of the plan. */
    MISSING_ARM("missing-arm", true),
    /** An arm carries a metric the plan does not use. */
    UNKNOWN_METRIC("unknown-metric", true),
    /** An arm lacks a metric the plan uses. */
    MISSING_METRIC("missing-metric", true);

    private final String code;
    private final boolean deadLetter;

    Reason(String code, boolean deadLetter) {
        this.code = code;
        this.deadLetter = deadLetter;
    }

    /** Stable lower-case code: dead-letter header value and metric label. */
    public String code() {
        return code;
    }

    /** Whether the record belongs in the dead-letter topic (false only for a harmless redelivery). */
    public boolean deadLetter() {
        return deadLetter;
    }
}
