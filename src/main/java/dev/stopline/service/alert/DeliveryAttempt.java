package dev.stopline.service.alert;

import java.net.URI;
import java.time.Duration;
import java.time.Instant;

/**
 * What one HTTP attempt to one endpoint did, for the outbox to record.
 *
 * @param endpoint where it was sent
 * @param messageId the {@code webhook-id}
 * @param attempt 1 for the first try
 * @param at when the request was sent (the signed {@code webhook-timestamp})
 * @param outcome what this attempt means for the message at this endpoint
 * @param status the HTTP status, or -1 if no response came (timeout, refused connection)
 * @param nextDelay the wait before the next attempt if {@code outcome} is {@link Outcome#RETRY}, else zero
 * @param detail a short human explanation (status line, exception, Retry-After used)
 */
public record DeliveryAttempt(URI endpoint, String messageId, int attempt, Instant at, Outcome outcome, int status,
        Duration nextDelay, String detail) {

    /** The meaning of an attempt. All but {@link #RETRY} are final for that message and endpoint. */
    public enum Outcome {
        /** 2xx: delivered; never sent to this endpoint again. */
        DELIVERED,
        /** 5xx, 408, 425, 429, timeout or connection failure; another attempt follows after {@code nextDelay}. */
        RETRY,
        /** 410 Gone: the receiver asked us to stop; the endpoint is disabled for every later message. */
        ENDPOINT_GONE,
        /** Another 3xx or 4xx: the receiver refused this message; sending it again would not help. */
        REJECTED,
        /** A retryable failure, but attempts or time ran out (or the sender was interrupted). */
        GAVE_UP
    }

    /** Whether no further attempt of this message to this endpoint will follow. */
    public boolean isFinal() {
        return outcome != Outcome.RETRY;
    }
}
