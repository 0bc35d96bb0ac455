package dev.stopline.service.alert;

import dev.stopline.monitor.AlertKind;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.IOException;
import java.io.InputStream;
import java.net.InetAddress;
import java.net.InetSocketAddress;
import java.net.URI;
import java.time.Duration;
import java.time.Instant;
import java.time.ZoneOffset;
import java.time.format.DateTimeFormatter;
import java.util.ArrayList;
import java.util.Collections;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.concurrent.ConcurrentHashMap;
import java.util.concurrent.ConcurrentLinkedQueue;
import java.util.concurrent.CopyOnWriteArrayList;
import java.util.concurrent.CountDownLatch;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.TimeUnit;

import org.junit.jupiter.api.AfterEach;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.sun.net.httpserver.HttpExchange;
import com.sun.net.httpserver.HttpServer;

import dev.stopline.service.alert.DeliveryAttempt.Outcome;
import dev.stopline.service.alert.EndpointResult.State;
import dev.stopline.testing.FreePorts;
import dev.stopline.testing.TestClock;

/**
 * Against a real HTTP server on 127.0.0.1 that verifies every request's signature with
 * {@link WebhookSigner#verify}. Waits between attempts go through a sleeper that records them and advances
 * the test clock, so retries take no real time; timeouts are real (short) ones.
 */
class WebhookDeliveryTest {
    private static final String SECRET = "whsec_" + java.util.Base64.getEncoder()
            .encodeToString("bookshop-webhook-key-0001".getBytes(java.nio.charset.StandardCharsets.UTF_8));
    private static final Instant START = Instant.parse("2026-11-30T10:00:00Z");

    private final TestClock clock = TestClock.at(START);
    private final List<Duration> sleeps = new CopyOnWriteArrayList<>();
    private final List<DeliveryAttempt> heard = new CopyOnWriteArrayList<>();
    private final CloudEvents events = CloudEvents.forInstance("test");
    private final Map<String, ConcurrentLinkedQueue<Reply>> script = new ConcurrentHashMap<>();
    private final Map<String, List<Received>> received = new ConcurrentHashMap<>();
    private final List<String> badSignatures = new CopyOnWriteArrayList<>();
    private final CountDownLatch releaseSlow = new CountDownLatch(1);
    private HttpServer server;
    private ExecutorService pool;

    /** What the server answers next on a path: a status, an optional Retry-After, a delay before answering. */
    private record Reply(int status, String retryAfter, long delayMs) {
        static Reply of(int status) {
            return new Reply(status, null, 0);
        }
    }

    private record Received(String id, long timestamp, String contentType, byte[] body) {
    }

    @BeforeEach
    void startServer() throws IOException {
        server = HttpServer.create(new InetSocketAddress(InetAddress.getLoopbackAddress(), FreePorts.pick()), 16);
        pool = Executors.newFixedThreadPool(4);
        server.setExecutor(pool);
        server.createContext("/", this::handle);
        server.start();
    }

    @AfterEach
    void stopServer() throws InterruptedException {
        releaseSlow.countDown();
        server.stop(0);
        pool.shutdownNow();
        pool.awaitTermination(5, TimeUnit.SECONDS);
    }

    private void handle(HttpExchange ex) throws IOException {
        String path = ex.getRequestURI().getPath();
        byte[] body;
        try (InputStream in = ex.getRequestBody()) {
            body = in.readAllBytes();
        }
        Map<String, String> h = new java.util.HashMap<>();
        ex.getRequestHeaders().forEach((k, v) -> h.put(k, v.get(0)));
        try {
            WebhookSigner.verify(h, body, SECRET, clock); // the receiver's side, same clock
        } catch (WebhookVerificationException e) {
            badSignatures.add(path + ": " + e.getMessage());
        }
        received.computeIfAbsent(path, k -> new CopyOnWriteArrayList<>()).add(new Received(
                h.get("Webhook-id"), Long.parseLong(h.get("Webhook-timestamp")), h.get("Content-type"), body));
        Reply r = script.getOrDefault(path, new ConcurrentLinkedQueue<>()).poll();
        if (r == null) {
            r = Reply.of(200);
        }
        if (r.delayMs() > 0) {
            try {
                releaseSlow.await(r.delayMs(), TimeUnit.MILLISECONDS);
            } catch (InterruptedException e) {
                Thread.currentThread().interrupt();
            }
        }
        if (r.retryAfter() != null) {
            ex.getResponseHeaders().add("Retry-After", r.retryAfter());
        }
        ex.sendResponseHeaders(r.status(), -1);
        ex.close();
    }

    private URI url(String path) {
        return URI.create("http://127.0.0.1:" + server.getAddress().getPort() + path);
    }

    private void answer(String path, Reply... replies) {
        script.computeIfAbsent(path, k -> new ConcurrentLinkedQueue<>()).addAll(List.of(replies));
    }

    private List<Received> got(String path) {
        return received.getOrDefault(path, Collections.emptyList());
    }

    private WebhookDelivery.Builder delivery(RetryPolicy policy) {
        return WebhookDelivery.builder(events).policy(policy).clock(clock).random(new SplittableRandom(42))
                .requestTimeout(Duration.ofSeconds(5)).listener(heard::add)
                .sleeper(d -> {
                    sleeps.add(d);
                    clock.advance(d);
                });
    }

    private static RetryPolicy policy(int attempts) {
        return new RetryPolicy(attempts, Duration.ofSeconds(1), Duration.ofSeconds(60), Duration.ofMinutes(10));
    }

    private static AlertEnvelope alert(String occasion) {
        AlertKind k = AlertKind.EFFICACY;
        return new AlertEnvelope(AlertEnvelope.stableId("checkout-redesign", k, occasion), "checkout-redesign", k,
                START, Map.of("look", 2));
    }

    @Test
    void serverError_thenOk_isDeliveredOnce_andNeverSentAgain() throws Exception {
        answer("/a", Reply.of(500), Reply.of(200));
        WebhookDelivery d = delivery(policy(5)).endpoint(url("/a"), SECRET).build();
        AlertEnvelope a = alert("look-2");

        EndpointResult r = d.deliver(a).get(0);

        assertEquals(State.DELIVERED, r.state());
        assertEquals(List.of(Outcome.RETRY, Outcome.DELIVERED), outcomes(r));
        assertEquals(List.of(500, 200), List.of(r.attempts().get(0).status(), r.attempts().get(1).status()));
        assertEquals(List.of(r.attempts().get(0).nextDelay()), sleeps, "slept exactly the announced backoff");
        assertTrue(sleeps.get(0).compareTo(Duration.ofSeconds(1)) <= 0, "first full-jitter wait <= 1 s base");
        assertEquals(policy(5).backoff(1, new SplittableRandom(42)), sleeps.get(0), "the injected seed drew it");
        assertEquals(r.attempts(), heard, "the listener heard every attempt, in order");
        assertEquals(2, got("/a").size());
        assertEquals(List.of(a.id(), a.id()), List.of(got("/a").get(0).id(), got("/a").get(1).id()),
                "same webhook-id on the retry");
        assertTrue(got("/a").get(1).timestamp() >= got("/a").get(0).timestamp(), "each attempt re-signed at its time");
        assertEquals(List.of(), badSignatures);

        EndpointResult again = d.deliver(a).get(0);
        assertEquals(State.SKIPPED_ALREADY_DELIVERED, again.state());
        assertEquals(2, got("/a").size(), "no duplicate after success");
    }

    @Test
    void body_isTheStructuredCloudEvent_withItsMediaType() throws Exception {
        WebhookDelivery d = delivery(policy(1)).endpoint(url("/ce"), SECRET).build();
        AlertEnvelope a = alert("look-1");
        assertEquals(State.DELIVERED, d.deliver(a).get(0).state());

        Received r = got("/ce").get(0);
        assertEquals("application/cloudevents+json", r.contentType());
        JsonNode e = new ObjectMapper().readTree(r.body());
        assertEquals(a.id(), e.get("id").asText());
        assertEquals("dev.stopline.alert.efficacy", e.get("type").asText());
        assertEquals(List.of(), badSignatures);
    }

    @Test
    void tooManyRequests_honoursRetryAfterSeconds() {
        answer("/busy", new Reply(429, "7", 0), Reply.of(200));
        WebhookDelivery d = delivery(policy(5)).endpoint(url("/busy"), SECRET).build();

        EndpointResult r = d.deliver(alert("look-3")).get(0);

        assertEquals(State.DELIVERED, r.state());
        assertEquals(List.of(Duration.ofSeconds(7)), sleeps, "waited what Retry-After said, no jitter");
        assertEquals(Duration.ofSeconds(7), r.attempts().get(0).nextDelay());
        assertEquals(List.of(), badSignatures);
    }

    @Test
    void tooManyRequests_honoursRetryAfterHttpDate() {
        // the server asks for a retry 12 s after the test clock's now, as an IMF-fixdate (RFC 9110)
        String date = DateTimeFormatter.RFC_1123_DATE_TIME.format(START.plusSeconds(12).atOffset(ZoneOffset.UTC));
        answer("/date", new Reply(429, date, 0), Reply.of(204));
        WebhookDelivery d = delivery(policy(5)).endpoint(url("/date"), SECRET).build();

        EndpointResult r = d.deliver(alert("look-3")).get(0);

        assertEquals(State.DELIVERED, r.state());
        assertEquals(List.of(Duration.ofSeconds(12)), sleeps);
    }

    @Test
    void retryAfter_beyondTheTimeBudget_givesUpInsteadOfWaiting() {
        answer("/later", new Reply(429, "3600", 0));
        WebhookDelivery d = delivery(policy(5)).endpoint(url("/later"), SECRET).build(); // budget 10 min

        EndpointResult r = d.deliver(alert("look-3")).get(0);

        assertEquals(State.GAVE_UP, r.state());
        assertEquals(1, got("/later").size());
        assertEquals(List.of(), sleeps);
        assertTrue(r.attempts().get(0).detail().contains("budget"), r.attempts().get(0).detail());
    }

    @Test
    void gone_disablesTheEndpoint_forLaterMessages_whileOthersStillReceive() {
        answer("/gone", Reply.of(410));
        WebhookDelivery d = delivery(policy(5)).endpoint(url("/gone"), SECRET).endpoint(url("/ok"), SECRET).build();

        List<EndpointResult> first = d.deliver(alert("look-1"));
        List<EndpointResult> second = d.deliver(alert("look-2"));

        assertEquals(List.of(State.ENDPOINT_GONE, State.DELIVERED), List.of(first.get(0).state(), first.get(1).state()));
        assertEquals(List.of(State.SKIPPED_DISABLED, State.DELIVERED),
                List.of(second.get(0).state(), second.get(1).state()));
        assertEquals(1, got("/gone").size(), "410 is not retried and the endpoint gets nothing more");
        assertEquals(2, got("/ok").size());
        assertEquals(java.util.Set.of(url("/gone")), d.disabledEndpoints());
        assertEquals(List.of(), sleeps);

        d.enable(url("/gone"));
        assertEquals(State.DELIVERED, d.deliver(alert("look-3")).get(0).state());
    }

    @Test
    void slowEndpoint_timesOut_isRetried_thenGivenUpAfterMaxAttempts() {
        answer("/slow", new Reply(200, null, 3_000), new Reply(200, null, 3_000), new Reply(200, null, 3_000));
        WebhookDelivery d = delivery(policy(3)).requestTimeout(Duration.ofMillis(250))
                .endpoint(url("/slow"), SECRET).build();

        long t0 = System.nanoTime();
        EndpointResult r = d.deliver(alert("look-4")).get(0);
        long ms = TimeUnit.NANOSECONDS.toMillis(System.nanoTime() - t0);

        assertEquals(State.GAVE_UP, r.state());
        assertEquals(List.of(Outcome.RETRY, Outcome.RETRY, Outcome.GAVE_UP), outcomes(r));
        r.attempts().forEach(a -> assertEquals(-1, a.status(), "no response: " + a.detail()));
        assertTrue(r.attempts().get(0).detail().startsWith("timeout"), r.attempts().get(0).detail());
        assertEquals(2, sleeps.size());
        // 3 real request timeouts of 250 ms, plus slack for a busy machine; far below the 3 s answers
        assertTrue(ms < 2_500, "took " + ms + " ms");
    }

    @Test
    void refusedConnection_isRetried_andOtherClientErrors_areNot() {
        URI nobody = URI.create("http://127.0.0.1:" + FreePorts.pick() + "/none");
        answer("/bad", Reply.of(400));
        WebhookDelivery d = delivery(policy(2)).endpoint(nobody, SECRET).endpoint(url("/bad"), SECRET).build();

        List<EndpointResult> r = d.deliver(alert("look-5"));

        assertEquals(State.GAVE_UP, r.get(0).state());
        assertEquals(2, r.get(0).attempts().size());
        assertEquals(State.REJECTED, r.get(1).state());
        assertEquals(1, got("/bad").size(), "400 is not retried");
    }

    @Test
    void markDelivered_fromTheOutbox_suppressesTheSend() {
        WebhookDelivery d = delivery(policy(2)).endpoint(url("/m"), SECRET).build();
        AlertEnvelope a = alert("look-6");
        d.markDelivered(a.id(), url("/m"));
        assertEquals(State.SKIPPED_ALREADY_DELIVERED, d.deliver(a).get(0).state());
        assertEquals(0, got("/m").size());
    }

    @Test
    void retryAfter_parsing_followsRfc9110() {
        Instant now = Instant.parse("2026-11-30T10:00:00Z");
        assertEquals(Duration.ofSeconds(120), WebhookDelivery.retryAfter("120", now).orElseThrow());
        assertEquals(Duration.ofSeconds(30),
                WebhookDelivery.retryAfter("Mon, 30 Nov 2026 10:00:30 GMT", now).orElseThrow());
        assertEquals(Duration.ZERO, WebhookDelivery.retryAfter("Mon, 30 Nov 2026 09:00:00 GMT", now).orElseThrow(),
                "a date in the past means now");
        assertTrue(WebhookDelivery.retryAfter("soon", now).isEmpty());
        assertTrue(WebhookDelivery.retryAfter("-5", now).isEmpty());
        assertTrue(WebhookDelivery.retryAfter(null, now).isEmpty());
    }

    private static List<Outcome> outcomes(EndpointResult r) {
        List<Outcome> o = new ArrayList<>();
        r.attempts().forEach(a -> o.add(a.outcome()));
        return o;
    }
}
