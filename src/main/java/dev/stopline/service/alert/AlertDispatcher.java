package dev.stopline.service.alert;

import dev.stopline.monitor.AlertKind;
import com.fasterxml.jackson.core.type.TypeReference;
import dev.stopline.monitor.Alert;
import dev.stopline.service.store.Json;
import dev.stopline.service.store.Store;
import io.quarkus.runtime.ShutdownEvent;
import io.quarkus.runtime.StartupEvent;
import io.smallrye.reactive.messaging.kafka.api.OutgoingKafkaRecordMetadata;
import jakarta.enterprise.context.ApplicationScoped;
import jakarta.enterprise.event.Observes;
import jakarta.inject.Inject;
import java.net.URI;
import java.nio.charset.StandardCharsets;
import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import java.util.Set;
import java.util.concurrent.ConcurrentHashMap;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.CompletableFuture;
import java.util.concurrent.Executors;
import java.util.concurrent.ScheduledExecutorService;
import java.util.concurrent.TimeUnit;
import org.apache.kafka.common.header.internals.RecordHeaders;
import org.eclipse.microprofile.config.inject.ConfigProperty;
import org.eclipse.microprofile.reactive.messaging.Channel;
import org.eclipse.microprofile.reactive.messaging.Emitter;
import org.eclipse.microprofile.reactive.messaging.Message;
import org.eclipse.microprofile.reactive.messaging.Metadata;
import org.jboss.logging.Logger;

/**
 * Delivers alerts from the transactional outbox to every channel: the alert topic as CloudEvents,
 * each configured webhook (Standard Webhooks signing, retries with backoff and jitter, 410 disables,
 * 429 honours Retry-After), and one structured log line.
 *
 * <p>An alert row and its outbox rows are written in the same transaction as the look that raised
 * it; this dispatcher only reads due outbox rows and records each attempt. A delivery that fails stays
 * pending and is tried again later, across restarts: nothing is lost while a channel is down. A
 * channel that succeeded is marked delivered and never sent again.
 *
 * <p>Each webhook endpoint has a thread of its own: a delivery to it retries in place for up to about
 * two minutes ({@link RetryPolicy#defaults()}), and on the dispatcher's thread that held up the log line
 * and the Kafka event of every later alert (measured: a receiver down for 6 s delayed another alert's
 * CloudEvent by 19 s, {@code DaemonWebhookOutageIT}). Now a slow or dead endpoint delays only its own
 * deliveries; an outbox row already being delivered is not handed out again by a later round.
 */
@ApplicationScoped
public class AlertDispatcher {
    private static final Logger LOG = Logger.getLogger(AlertDispatcher.class);
    private static final Logger ALERTS = Logger.getLogger("stopline.alert");
    static final String KAFKA = "kafka";
    static final String LOG_CHANNEL = "log";
    static final String WEBHOOK = "webhook:";

    private final Store store;
    private final Clock clock;
    private final Emitter<String> alertTopic;
    private final CloudEvents events;
    private final WebhookDelivery webhooks;
    private final List<String> channels;
    private final List<URI> webhookUrls;
    private final Duration retryLater;
    private ScheduledExecutorService executor;
    private final Map<URI, ExecutorService> webhookLanes = new ConcurrentHashMap<>();
    private final Set<String> inFlight = ConcurrentHashMap.newKeySet();

    @Inject
    public AlertDispatcher(Store store, Clock clock, @Channel("alerts") Emitter<String> alertTopic,
                           @ConfigProperty(name = "stopline.instance", defaultValue = "stopline") String instance,
                           @ConfigProperty(name = "stopline.webhooks.urls") Optional<List<URI>> webhookUrls,
                           @ConfigProperty(name = "stopline.webhooks.secret") Optional<String> webhookSecret,
                           @ConfigProperty(name = "stopline.webhooks.retry-later", defaultValue = "PT1M") Duration retryLater) {
        this.store = store;
        this.clock = clock;
        this.alertTopic = alertTopic;
        this.events = CloudEvents.forInstance(instance);
        this.retryLater = retryLater;
        List<String> ch = new ArrayList<>(List.of(LOG_CHANNEL, KAFKA));
        WebhookDelivery.Builder b = WebhookDelivery.builder(events).clock(clock);
        for (URI url : webhookUrls.orElse(List.of())) {
            String secret = webhookSecret.orElseThrow(() -> new IllegalStateException(
                    "stopline.webhooks.urls is set but stopline.webhooks.secret (STOPLINE_WEBHOOKS_SECRET) is not"));
            b.endpoint(url, secret);
            ch.add(WEBHOOK + url);
        }
        this.webhooks = b.build();
        this.channels = List.copyOf(ch);
        this.webhookUrls = List.copyOf(webhookUrls.orElse(List.of()));
    }

    /** The channels every new alert is queued for. */
    public List<String> channels() {
        return channels;
    }

    void onStart(@Observes StartupEvent ev) {
        executor = Executors.newSingleThreadScheduledExecutor(r -> {
            Thread t = new Thread(r, "stopline-alert-dispatcher");
            t.setDaemon(true);
            return t;
        });
        executor.scheduleWithFixedDelay(this::drainSafely, 1, 1, TimeUnit.SECONDS);
    }

    void onStop(@Observes ShutdownEvent ev) {
        if (executor != null) {
            executor.shutdownNow();
        }
        webhookLanes.values().forEach(ExecutorService::shutdownNow);
    }

    /** Asks for a delivery round now. */
    public void wake() {
        if (executor != null && !executor.isShutdown()) {
            executor.execute(this::drainSafely);
        }
    }

    /**
     * New alerts were committed (their outbox rows are durable): each one's CloudEvent is sent to the
     * alert topic at once from the caller's thread (the send only queues the record), and a delivery round
     * follows for the other channels. Without this the event waited for a hand-off to the dispatcher
     * thread and a query of the outbox, a few milliseconds at the median and up to 15 at the 99th
     * percentile in the ingest benchmark. The acknowledgement is recorded on the dispatcher thread; the
     * row is marked in flight meanwhile so that no round sends it a second time. If the send cannot be
     * queued the row stays pending and the round sends it.
     */
    public void wake(List<Alert> fresh) {
        if (executor == null || executor.isShutdown()) {
            return;
        }
        if (channels.contains(KAFKA)) {
            for (Alert alert : fresh) {
                String key = alert.id() + " " + KAFKA;
                if (!inFlight.add(key)) {
                    continue;
                }
                CompletableFuture<Void> acked;
                try {
                    acked = sendToTopic(alert);
                } catch (RuntimeException e) {
                    inFlight.remove(key);
                    continue;
                }
                acked.whenComplete((ok, failed) -> onDispatcherThread(key, () -> {
                    if (failed == null) {
                        done(alert.id(), KAFKA);
                    } else {
                        retry(alert.id(), KAFKA, "alert topic write failed: " + failed.getMessage());
                    }
                }));
            }
        }
        wake();
    }

    /** Runs a delivery's bookkeeping on the dispatcher thread, then releases its in-flight mark. */
    private void onDispatcherThread(String key, Runnable bookkeeping) {
        try {
            executor.execute(() -> {
                try {
                    bookkeeping.run();
                } catch (RuntimeException e) {
                    LOG.warnf("could not record an alert delivery (%s), will retry: %s", key, e.getMessage());
                } finally {
                    inFlight.remove(key);
                }
            });
        } catch (java.util.concurrent.RejectedExecutionException e) {
            inFlight.remove(key);          // shutting down: the row stays pending, sent again at the next start
        }
    }

    private void drainSafely() {
        try {
            drain();
        } catch (RuntimeException e) {
            LOG.warnf("alert delivery round failed, will retry: %s", e.getMessage());
        }
    }

    /**
     * Delivers every due outbox row once: Kafka and log rows here, webhook rows handed to their endpoint's
     * thread (unless that row is still being delivered there). Returns how many rows were delivered here.
     * The alert topic goes first, all its records sent before any acknowledgement is awaited, so a burst
     * of alerts costs one round trip rather than one each (machines act on the topic; the log line
     * follows, each delivery records its attempt in a transaction).
     */
    public synchronized int drain() {
        int delivered = 0;
        Instant now = clock.instant();
        syncDisabledWebhooks();
        List<Store.OutboxItem> due = new ArrayList<>(store.dueDeliveries(now, 100, false));
        due.addAll(store.dueDeliveries(now, 100, true)); // asked apart: a dead endpoint's backlog holds nothing up
        Map<Store.OutboxItem, CompletableFuture<Void>> sent = new java.util.LinkedHashMap<>();
        for (Store.OutboxItem item : due) {
            if (KAFKA.equals(item.channel())) {
                if (inFlight.contains(item.alertId() + " " + KAFKA)) {
                    continue;                // sent by wake(List), its acknowledgement not yet recorded
                }
                try {
                    sent.put(item, sendToTopic(item.alert()));
                } catch (RuntimeException e) {
                    retry(item, e.getMessage());
                }
            } else if (item.channel().startsWith(WEBHOOK)) {
                handToLane(item);
            }
        }
        for (Map.Entry<Store.OutboxItem, CompletableFuture<Void>> e : sent.entrySet()) {
            try {
                e.getValue().get(30, TimeUnit.SECONDS);
                delivered += done(e.getKey()) ? 1 : 0;
            } catch (Exception failed) {
                if (failed instanceof InterruptedException) {
                    Thread.currentThread().interrupt();
                }
                retry(e.getKey(), "alert topic write failed: " + failed.getMessage());
            }
        }
        for (Store.OutboxItem item : due) {
            if (!KAFKA.equals(item.channel()) && !item.channel().startsWith(WEBHOOK)) { // the log, or unknown
                delivered += deliver(item) ? 1 : 0;
            }
        }
        return delivered;
    }

    /**
     * The database says which webhook endpoints are switched off (a 410 Gone, here or at another instance,
     * before or after a restart); an operator switches one on again with {@link #enableWebhook}. Asked at
     * every delivery round, so every instance follows within a round.
     */
    private void syncDisabledWebhooks() {
        if (webhookUrls.isEmpty()) {
            return;
        }
        Map<String, Store.DisabledWebhook> off = store.disabledWebhooks();
        for (URI url : webhookUrls) {
            if (off.containsKey(url.toString())) {
                webhooks.disable(url);
            } else {
                webhooks.enable(url);
            }
        }
    }

    /** One configured webhook endpoint: on, or off since a 410 (when and why). */
    public record WebhookStatus(String url, boolean enabled, Instant disabledAt, String reason) {
    }

    /** The configured webhook endpoints, in configuration order. */
    public List<WebhookStatus> webhookEndpoints() {
        Map<String, Store.DisabledWebhook> off = store.disabledWebhooks();
        List<WebhookStatus> out = new ArrayList<>();
        for (URI url : webhookUrls) {
            Store.DisabledWebhook d = off.get(url.toString());
            out.add(d == null ? new WebhookStatus(url.toString(), true, null, null)
                    : new WebhookStatus(url.toString(), false, d.disabledAt(), d.reason()));
        }
        return out;
    }

    /**
     * Switches a configured endpoint on again (it answered 410 before); alerts raised from now on are sent
     * to it. Deliveries abandoned meanwhile stay abandoned. Empty if {@code url} is not configured.
     */
    public Optional<WebhookStatus> enableWebhook(String url) {
        for (URI configured : webhookUrls) {
            if (configured.toString().equals(url)) {
                store.enableWebhook(url);
                webhooks.enable(configured);
                return Optional.of(new WebhookStatus(url, true, null, null));
            }
        }
        return Optional.empty();
    }

    private void handToLane(Store.OutboxItem item) {
        String key = item.alertId() + " " + item.channel();
        if (!inFlight.add(key)) {
            return;
        }
        URI url = URI.create(item.channel().substring(WEBHOOK.length()));
        try {
            webhookLanes.computeIfAbsent(url, u -> Executors.newSingleThreadExecutor(r -> {
                Thread t = new Thread(r, "stopline-webhook-" + u.getHost() + ":" + u.getPort());
                t.setDaemon(true);
                return t;
            })).execute(() -> {
                try {
                    deliver(item);
                } catch (RuntimeException e) {
                    LOG.warnf("webhook delivery of %s failed, will retry: %s", item.alertId(), e.getMessage());
                } finally {
                    inFlight.remove(key);
                }
            });
        } catch (java.util.concurrent.RejectedExecutionException e) {
            inFlight.remove(key);          // shutting down: the row stays pending for the next start
        }
    }

    private boolean deliver(Store.OutboxItem item) {
        Alert alert = item.alert();
        try {
            if (LOG_CHANNEL.equals(item.channel())) {
                ALERTS.infof("%s %s", alert.kind().wireName(), Json.write(Map.of("id", alert.id(),
                        "experiment", alert.experiment(), "kind", alert.kind().wireName(), "summary", alert.summary())));
                return done(item);
            }
            byte[] body = events.toBytes(envelope(alert));
            if (item.channel().startsWith(WEBHOOK)) {
                URI url = URI.create(item.channel().substring(WEBHOOK.length()));
                EndpointResult r = webhooks.deliverTo(url, alert.id(), body, CloudEvents.STRUCTURED_CONTENT_TYPE);
                switch (r.state()) {
                    case DELIVERED, SKIPPED_ALREADY_DELIVERED:
                        return done(item);
                    case ENDPOINT_GONE, SKIPPED_DISABLED, REJECTED:
                        if (r.state() == EndpointResult.State.ENDPOINT_GONE) {
                            store.disableWebhook(url.toString(), "answered 410 Gone to alert " + alert.id(),
                                    clock.instant());
                        }
                        store.recordAttempt(item.alertId(), item.channel(), "abandoned", null,
                                "endpoint answered " + r.state() + "; not retried", clock.instant());
                        return false;
                    default:
                        retry(item, "gave up for now after " + r.attempts().size() + " attempts");
                        return false;
                }
            }
            store.recordAttempt(item.alertId(), item.channel(), "abandoned", null, "unknown channel", clock.instant());
            return false;
        } catch (RuntimeException e) {
            retry(item, e.getMessage());
            return false;
        }
    }

    private boolean done(Store.OutboxItem item) {
        return done(item.alertId(), item.channel());
    }

    private boolean done(String alertId, String channel) {
        store.recordAttempt(alertId, channel, "delivered", null, null, clock.instant());
        return true;
    }

    private void retry(Store.OutboxItem item, String error) {
        retry(item.alertId(), item.channel(), error);
    }

    private void retry(String alertId, String channel, String error) {
        store.recordAttempt(alertId, channel, "pending", clock.instant().plus(retryLater), error, clock.instant());
    }

    /** Sends the alert's CloudEvent to the alert topic; the future completes when the broker acknowledged it. */
    private CompletableFuture<Void> sendToTopic(Alert alert) {
        String cloudEvent = new String(events.toBytes(envelope(alert)), StandardCharsets.UTF_8);
        RecordHeaders headers = new RecordHeaders();
        headers.add("content-type", CloudEvents.STRUCTURED_CONTENT_TYPE.getBytes(StandardCharsets.UTF_8));
        OutgoingKafkaRecordMetadata<String> meta = OutgoingKafkaRecordMetadata.<String>builder()
                .withKey(alert.experiment()).withHeaders(headers).build();
        CompletableFuture<Void> acked = new CompletableFuture<>();
        alertTopic.send(Message.of(cloudEvent, Metadata.of(meta))
                .withAck(() -> {
                    acked.complete(null);
                    return CompletableFuture.completedFuture(null);
                })
                .withNack(e -> {
                    acked.completeExceptionally(e);
                    return CompletableFuture.completedFuture(null);
                }));
        return acked;
    }

    static AlertEnvelope envelope(Alert alert) {
        Map<String, Object> payload = Json.MAPPER.convertValue(alert, new TypeReference<Map<String, Object>>() { });
        return new AlertEnvelope(alert.id(), alert.experiment(), alert.kind(),
                alert.observedAt(), payload);
    }
}
