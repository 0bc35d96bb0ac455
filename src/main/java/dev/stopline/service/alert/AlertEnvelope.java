package dev.stopline.service.alert;

import dev.stopline.monitor.AlertKind;

import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.Collections;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.UUID;

/**
 * One alert as it leaves the daemon, before it is rendered for a transport (CloudEvents over Kafka or a
 * webhook, a log line, a metric).
 *
 * @param id stable identifier of this alert: the same alert re-sent (retry, restart, second transport)
 *     keeps its id so consumers can drop duplicates; see {@link #stableId}
 * @param experimentId the experiment the alert is about (CloudEvents {@code subject})
 * @param kind what was decided
 * @param time when the decision was made
 * @param payload the decision's details, rendered as the JSON {@code data}; copied into an unmodifiable
 *     map that keeps insertion order (nested values are the caller's and should be immutable too)
 */
public record AlertEnvelope(String id, String experimentId, AlertKind kind, Instant time, Map<String, Object> payload) {

    /** Validates every field (none may be null, ids not blank) and copies the payload. */
    public AlertEnvelope {
        requireText("alert id", id);
        requireText("experiment id", experimentId);
        if (kind == null || time == null || payload == null) {
            throw new IllegalArgumentException("alert kind, time and payload must not be null");
        }
        payload = Collections.unmodifiableMap(new LinkedHashMap<>(payload));
    }

    /**
     * A name-based (RFC 4122 version 3) UUID of {@code experimentId}, {@code kind} and {@code occasion}
     * (e.g. the look number, or the guardrail metric and look): the same decision always gets the same id,
     * in any process, so duplicates can be recognised downstream.
     */
    public static String stableId(String experimentId, AlertKind kind, String occasion) {
        requireText("experiment id", experimentId);
        requireText("occasion", occasion);
        String name = "stopline-alert\n" + experimentId + "\n" + kind.wireName() + "\n" + occasion;
        return UUID.nameUUIDFromBytes(name.getBytes(StandardCharsets.UTF_8)).toString();
    }

    private static void requireText(String what, String s) {
        if (s == null || s.isBlank()) {
            throw new IllegalArgumentException(what + " must not be blank");
        }
    }
}
