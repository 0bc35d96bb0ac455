package dev.stopline.service.alert;

import java.net.URI;
import java.util.List;

/**
 * The end state of one message at one endpoint.
 *
 * @param endpoint the endpoint
 * @param state the final state
 * @param attempts the attempts made in this call, oldest first (empty when skipped)
 */
public record EndpointResult(URI endpoint, State state, List<DeliveryAttempt> attempts) {

    /** Final state of a message at an endpoint. */
    public enum State {
        DELIVERED, ENDPOINT_GONE, REJECTED, GAVE_UP,
        /** Not sent: this message was already delivered to this endpoint earlier. */
        SKIPPED_ALREADY_DELIVERED,
        /** Not sent: the endpoint answered 410 Gone earlier and is disabled. */
        SKIPPED_DISABLED
    }

    /** Copies the attempts. */
    public EndpointResult {
        attempts = List.copyOf(attempts);
    }
}
