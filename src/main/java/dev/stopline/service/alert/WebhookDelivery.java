package dev.stopline.service.alert;

import java.io.IOException;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.net.http.HttpTimeoutException;
import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import java.time.ZonedDateTime;
import java.time.format.DateTimeFormatter;
import java.time.format.DateTimeParseException;
import java.util.ArrayList;
import java.util.Collections;
import java.util.LinkedHashMap;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import java.util.Set;
import java.util.SplittableRandom;
import java.util.concurrent.ConcurrentHashMap;
import java.util.function.Consumer;

import org.jboss.logging.Logger;

import dev.stopline.service.alert.DeliveryAttempt.Outcome;
import dev.stopline.service.alert.EndpointResult.State;

/**
 * Sends signed webhooks ({@link WebhookSigner}) to the configured endpoints, retrying as {@link RetryPolicy}
 * says, and reports every attempt.
 *
 * <p>Rules, per endpoint:
 * <ul>
 *   <li>2xx: delivered. The pair (message id, endpoint) is remembered (the last
 *   {@value #DELIVERED_MEMORY} pairs) and a later call with the same message skips that endpoint.</li>
 *   <li>410 Gone: the endpoint is disabled for every later message until {@link #enable(URI)}.</li>
 *   <li>429 and 503 with {@code Retry-After} (delta-seconds or HTTP-date): the next attempt waits exactly
 *   that long (RFC 9110 section 10.2.3), unless that is past the policy's time budget, then it gives up.</li>
 *   <li>5xx, 408, 425, 429, request timeout, connection failure: retry after a full-jitter backoff.</li>
 *   <li>Any other status (3xx: redirects are not followed for signed requests; other 4xx): rejected, not
 *   retried.</li>
 * </ul>
 * Every attempt is signed anew: same {@code webhook-id}, the attempt's own {@code webhook-timestamp}.
 *
 * <p>The calls block (sleeping between attempts through the injected {@link Sleeper}); endpoints are served
 * one after another. The durable record of what was delivered is the caller's (the outbox): it gets every
 * {@link DeliveryAttempt} through the listener as it happens and the {@link EndpointResult}s at the end,
 * and can restore the memory after a restart with {@link #markDelivered} and {@link #disable}.
 */
public final class WebhookDelivery {
    /** How many delivered (message, endpoint) pairs are remembered to suppress duplicates. */
    public static final int DELIVERED_MEMORY = 10_000;
    private static final Logger LOG = Logger.getLogger(WebhookDelivery.class);

    private final CloudEvents events;
    private final List<WebhookEndpoint> endpoints;
    private final Map<URI, WebhookSigner> signers = new LinkedHashMap<>();
    private final RetryPolicy policy;
    private final Duration requestTimeout;
    private final Clock clock;
    private final Sleeper sleeper;
    private final SplittableRandom random;
    private final Consumer<DeliveryAttempt> listener;
    private final HttpClient http;
    private final Set<URI> disabled = ConcurrentHashMap.newKeySet();
    private final Map<String, Boolean> delivered = Collections.synchronizedMap(
            new LinkedHashMap<String, Boolean>(64, 0.75f, true) {
                private static final long serialVersionUID = 1L;

                @Override
                protected boolean removeEldestEntry(Map.Entry<String, Boolean> eldest) {
                    return size() > DELIVERED_MEMORY;
                }
            });

    private WebhookDelivery(Builder b) {
        this.events = b.events;
        this.endpoints = List.copyOf(b.endpoints);
        endpoints.forEach(e -> signers.put(e.url(), WebhookSigner.of(e.secret())));
        this.policy = b.policy;
        this.requestTimeout = b.requestTimeout;
        this.clock = b.clock;
        this.sleeper = b.sleeper;
        this.random = b.random;
        this.listener = b.listener;
        // HTTP/1.1: the JDK client's default would try an h2c upgrade on plain http, which some receivers
        // reject; one small POST per alert gains nothing from HTTP/2.
        this.http = HttpClient.newBuilder().version(HttpClient.Version.HTTP_1_1).connectTimeout(b.connectTimeout)
                .followRedirects(HttpClient.Redirect.NEVER).build();
    }

    /** A builder; {@code events} renders alerts as CloudEvents for {@link #deliver(AlertEnvelope)}. */
    public static Builder builder(CloudEvents events) {
        return new Builder(events);
    }

    /** Sends {@code alert} as a structured CloudEvent, {@code webhook-id} = the alert's id, to every endpoint. */
    public List<EndpointResult> deliver(AlertEnvelope alert) {
        return deliver(alert.id(), events.toBytes(alert), CloudEvents.STRUCTURED_CONTENT_TYPE);
    }

    /** Sends {@code body} with the given id and content type to every endpoint, in configuration order. */
    public List<EndpointResult> deliver(String messageId, byte[] body, String contentType) {
        List<EndpointResult> out = new ArrayList<>(endpoints.size());
        for (WebhookEndpoint e : endpoints) {
            out.add(deliverTo(e.url(), messageId, body, contentType));
        }
        return out;
    }

    /** Sends to one configured endpoint (lets a caller serve endpoints in parallel). */
    public EndpointResult deliverTo(URI endpoint, String messageId, byte[] body, String contentType) {
        WebhookSigner signer = signers.get(endpoint);
        if (signer == null) {
            throw new IllegalArgumentException("endpoint " + endpoint + " is not configured");
        }
        if (disabled.contains(endpoint)) {
            return new EndpointResult(endpoint, State.SKIPPED_DISABLED, List.of());
        }
        if (delivered.containsKey(key(messageId, endpoint))) {
            return new EndpointResult(endpoint, State.SKIPPED_ALREADY_DELIVERED, List.of());
        }
        List<DeliveryAttempt> attempts = new ArrayList<>();
        Instant first = clock.instant();
        for (int n = 1;; n++) {
            Instant at = clock.instant();
            Answer a = send(endpoint, signer, messageId, at, body, contentType);
            DeliveryAttempt attempt = decide(endpoint, messageId, n, at, first, a);
            attempts.add(attempt);
            listener.accept(attempt);
            if (attempt.isFinal()) {
                return new EndpointResult(endpoint, finish(attempt), attempts);
            }
            try {
                sleeper.sleep(attempt.nextDelay());
            } catch (InterruptedException ie) {
                Thread.currentThread().interrupt();
                LOG.warnf("webhook %s to %s interrupted while waiting to retry", messageId, endpoint);
                return new EndpointResult(endpoint, State.GAVE_UP, attempts);
            }
        }
    }

    /** Endpoints disabled by a 410 (or by {@link #disable}). */
    public Set<URI> disabledEndpoints() {
        return Set.copyOf(disabled);
    }

    /** Disables an endpoint (e.g. restored from the outbox after a restart). */
    public void disable(URI endpoint) {
        disabled.add(endpoint);
    }

    /** Sends to a disabled endpoint again. */
    public void enable(URI endpoint) {
        disabled.remove(endpoint);
    }

    /** Records that {@code messageId} reached {@code endpoint}, so it is not sent there again. */
    public void markDelivered(String messageId, URI endpoint) {
        delivered.put(key(messageId, endpoint), Boolean.TRUE);
    }

    /**
     * The wait a {@code Retry-After} value asks for: delta-seconds, or an HTTP-date (IMF-fixdate) minus
     * {@code now}, never negative; empty if absent or unreadable (the caller then uses its backoff).
     */
    public static Optional<Duration> retryAfter(String value, Instant now) {
        if (value == null || value.isBlank()) {
            return Optional.empty();
        }
        String v = value.trim();
        if (v.chars().allMatch(Character::isDigit)) {
            try {
                return Optional.of(Duration.ofSeconds(Long.parseLong(v)));
            } catch (NumberFormatException e) {
                return Optional.empty(); // more digits than a long holds
            }
        }
        try {
            Instant when = ZonedDateTime.parse(v, DateTimeFormatter.RFC_1123_DATE_TIME).toInstant();
            Duration d = Duration.between(now, when);
            return Optional.of(d.isNegative() ? Duration.ZERO : d);
        } catch (DateTimeParseException e) {
            return Optional.empty();
        }
    }

    /** The HTTP exchange's result: a status (or -1), the Retry-After wait if any, a description. */
    private record Answer(int status, Optional<Duration> retryAfter, String detail) {
    }

    private Answer send(URI endpoint, WebhookSigner signer, String id, Instant at, byte[] body, String type) {
        HttpRequest.Builder req = HttpRequest.newBuilder(endpoint).timeout(requestTimeout)
                .header("content-type", type).header("user-agent", "stopline-webhook")
                .POST(HttpRequest.BodyPublishers.ofByteArray(body));
        signer.headers(id, at, body).forEach(req::header);
        try {
            HttpResponse<Void> r = http.send(req.build(), HttpResponse.BodyHandlers.discarding());
            int s = r.statusCode();
            Optional<Duration> ra = (s == 429 || s == 503)
                    ? retryAfter(r.headers().firstValue("retry-after").orElse(null), clock.instant())
                    : Optional.empty();
            return new Answer(s, ra, "HTTP " + s);
        } catch (HttpTimeoutException e) {
            return new Answer(-1, Optional.empty(), "timeout: " + e.getMessage());
        } catch (IOException e) {
            return new Answer(-1, Optional.empty(), e.getClass().getSimpleName() + ": " + e.getMessage());
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            return new Answer(-2, Optional.empty(), "interrupted");
        }
    }

    private DeliveryAttempt decide(URI endpoint, String id, int n, Instant at, Instant first, Answer a) {
        int s = a.status();
        if (s >= 200 && s < 300) {
            markDelivered(id, endpoint);
            return attempt(endpoint, id, n, at, Outcome.DELIVERED, s, a.detail());
        }
        if (s == 410) {
            disabled.add(endpoint);
            LOG.warnf("webhook endpoint %s answered 410 Gone; disabled", endpoint);
            return attempt(endpoint, id, n, at, Outcome.ENDPOINT_GONE, s, a.detail());
        }
        if (s == -2) {
            return attempt(endpoint, id, n, at, Outcome.GAVE_UP, s, a.detail());
        }
        boolean retryable = s == -1 || s == 408 || s == 425 || s == 429 || (s >= 500 && s < 600);
        if (!retryable) {
            return attempt(endpoint, id, n, at, Outcome.REJECTED, s, a.detail());
        }
        if (n >= policy.maxAttempts()) {
            return attempt(endpoint, id, n, at, Outcome.GAVE_UP, s,
                    a.detail() + "; all " + policy.maxAttempts() + " attempts used");
        }
        Duration wait;
        String how;
        if (a.retryAfter().isPresent()) {
            wait = a.retryAfter().get();
            how = "Retry-After ";
        } else {
            synchronized (random) {
                wait = policy.backoff(n, random);
            }
            how = "backoff ";
        }
        Instant next = clock.instant().plus(wait);
        if (next.isAfter(first.plus(policy.maxElapsed()))) {
            return attempt(endpoint, id, n, at, Outcome.GAVE_UP, s, a.detail() + "; " + how + wait
                    + " would pass the " + policy.maxElapsed() + " budget");
        }
        return new DeliveryAttempt(endpoint, id, n, at, Outcome.RETRY, s, wait, a.detail() + "; " + how + wait);
    }

    private static DeliveryAttempt attempt(URI e, String id, int n, Instant at, Outcome o, int s, String d) {
        return new DeliveryAttempt(e, id, n, at, o, s, Duration.ZERO, d);
    }

    private static State finish(DeliveryAttempt a) {
        switch (a.outcome()) {
            case DELIVERED:
                return State.DELIVERED;
            case ENDPOINT_GONE:
                return State.ENDPOINT_GONE;
            case REJECTED:
                return State.REJECTED;
            default:
                return State.GAVE_UP;
        }
    }

    private static String key(String messageId, URI endpoint) {
        return messageId + " " + endpoint;
    }

    /** Options for {@link WebhookDelivery}. */
    public static final class Builder {
        private final CloudEvents events;
        private final Set<WebhookEndpoint> endpoints = new LinkedHashSet<>();
        private RetryPolicy policy = RetryPolicy.defaults();
        private Duration connectTimeout = Duration.ofSeconds(5);
        private Duration requestTimeout = Duration.ofSeconds(10);
        private Clock clock = Clock.systemUTC();
        private Sleeper sleeper = Sleeper.SYSTEM;
        private SplittableRandom random = new SplittableRandom();
        private Consumer<DeliveryAttempt> listener = a -> { };

        private Builder(CloudEvents events) {
            if (events == null) {
                throw new IllegalArgumentException("CloudEvents renderer must not be null");
            }
            this.events = events;
        }

        /** Adds an endpoint (URLs must be distinct). */
        public Builder endpoint(URI url, String secret) {
            WebhookEndpoint e = new WebhookEndpoint(url, secret);
            if (endpoints.stream().anyMatch(x -> x.url().equals(url))) {
                throw new IllegalArgumentException("endpoint " + url + " configured twice");
            }
            endpoints.add(e);
            return this;
        }

        public Builder policy(RetryPolicy p) {
            this.policy = java.util.Objects.requireNonNull(p, "policy");
            return this;
        }

        /** TCP connect timeout; positive; default 5 s. */
        public Builder connectTimeout(Duration d) {
            this.connectTimeout = positive("connect timeout", d);
            return this;
        }

        /** Time from sending the request to the response headers; positive; default 10 s. */
        public Builder requestTimeout(Duration d) {
            this.requestTimeout = positive("request timeout", d);
            return this;
        }

        public Builder clock(Clock c) {
            this.clock = java.util.Objects.requireNonNull(c, "clock");
            return this;
        }

        public Builder sleeper(Sleeper s) {
            this.sleeper = java.util.Objects.requireNonNull(s, "sleeper");
            return this;
        }

        /** Jitter source; pass a seeded one for reproducible waits. */
        public Builder random(SplittableRandom r) {
            this.random = java.util.Objects.requireNonNull(r, "random");
            return this;
        }

        /** Called after every attempt, on the delivering thread. */
        public Builder listener(Consumer<DeliveryAttempt> l) {
            this.listener = java.util.Objects.requireNonNull(l, "listener");
            return this;
        }

        public WebhookDelivery build() {
            return new WebhookDelivery(this);
        }

        private static Duration positive(String name, Duration d) {
            if (d != null && !d.isNegative() && !d.isZero()) {
                return d;
            }
            throw new IllegalArgumentException(name + " " + d + " must be > 0");
        }
    }
}
