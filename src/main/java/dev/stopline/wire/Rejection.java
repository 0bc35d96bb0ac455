package dev.stopline.wire;

import java.util.Objects;

/**
 * A record that was not used, with a stable reason and a detail for humans that names the field
 * (as a JSON pointer, e.g. {@code /arms/control/units}) and the offending value.
 *
 * @param reason stable reason; {@code reason.code()} goes into the dead-letter header
 * @param detail human-readable explanation, never used for control flow
 */
public record Rejection(Reason reason, String detail) implements Outcome {
    public Rejection {
        Objects.requireNonNull(reason, "reason");
        Objects.requireNonNull(detail, "detail");
    }

    /** The stable code, e.g. {@code invalid-value}. */
    public String code() {
        return reason.code();
    }

    @Override
    public String toString() {
        return reason.code() + ": " + detail;
    }
}
