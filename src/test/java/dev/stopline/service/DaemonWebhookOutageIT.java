package dev.stopline.service;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.stopline.service.broker.EmbeddedKafka;
import dev.stopline.testing.Counts;
import dev.stopline.testing.DaemonProcess;
import dev.stopline.testing.FreePorts;
import dev.stopline.testing.KafkaBrokerExtension;
import dev.stopline.testing.Oracle;
import dev.stopline.testing.TestKafka;
import dev.stopline.testing.WebhookReceiver;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardCopyOption;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.TreeMap;
import java.util.TreeSet;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.junit.jupiter.api.Test;

/**
 * Webhook endpoints that fail, through the running daemon and its outbox: one that is not listening yet
 * when the alerts are raised (connection refused) and comes up a few seconds later, one that answers 503
 * more often than the daemon retries in one go (so the alert goes back to the outbox and is sent again in
 * a later round), and one that answers 410 Gone. The first two get every alert exactly once with a valid
 * signature, the third is asked once and then left alone, and the outbox records each channel's outcome.
 * Meanwhile the alerts reach the Kafka topic within seconds: a webhook endpoint that is down delays only
 * its own deliveries.
 * The unit tests of the retry rules ({@code WebhookDeliveryTest}) use a stub clock and sleeper; this one
 * runs the packaged daemon against real sockets.
 */
class DaemonWebhookOutageIT {
    private static final int EXPERIMENTS = 4;
    private static final int SNAPSHOTS = 4;
    /** Failures of the flaky endpoint: more than one round's 8 attempts (RetryPolicy.defaults). */
    private static final int FLAKY_FAILURES = 10;
    /** How long the late endpoint stays down after the alerts exist. */
    private static final Duration LATE_BY = Duration.ofSeconds(6);
    /**
     * Longest wait from an alert's commit to its delivery on the Kafka topic while webhook endpoints are
     * down: a dispatcher round starts every second, so 3 s leaves room for a busy machine (our choice).
     */
    private static final Duration KAFKA_WITHIN = Duration.ofSeconds(3);

    private static String id(int e) {
        return "webhook-outage-" + e;
    }

    /**
     * Experiment e, snapshot k: 2,000 more units per arm each. Experiments 0 and 1 assign 55/45 (a
     * sample-ratio mismatch from the first snapshot), experiments 2 and 3 lift orders from 10% to 14% (an
     * efficacy stop at an early look). Invented numbers; which alerts they raise is the oracle's business.
     */
    private static String snapshot(int e, int k) {
        long n = 2000L * k;
        long c = e < 2 ? n * 55 / 50 : n;
        long t = e < 2 ? n * 45 / 50 : n;
        long tc = e >= 2 ? t * 14 / 100 : t / 10;
        return Counts.proportion(id(e), k, "orders", c, c / 10, t, tc);
    }

    @Test
    void failingEndpoints_getEveryAlertOnceWhenBack_andA410EndpointIsAskedOnceThenLeftAlone() throws Exception {
        KafkaBrokerExtension.trapExit();
        KafkaBrokerExtension.quietKafkaLogging();
        Path dir = Files.createTempDirectory("stopline-webhook-outage-");
        int[] ports = FreePorts.pickTwo();
        int latePort = FreePorts.pick();
        Files.createDirectories(dir.resolve("plans"));
        for (int e = 0; e < EXPERIMENTS; e++) {
            Files.writeString(dir.resolve("plans").resolve(id(e) + ".yaml"), Counts.plan(id(e)));
        }
        EmbeddedKafka broker = EmbeddedKafka.builder().port(ports[0]).controllerPort(ports[1])
                .dataDir(dir.resolve("kafka")).topic("stopline.counts", 1).build().start();
        WebhookReceiver late = null;
        try (WebhookReceiver flaky = WebhookReceiver.start(0).failFirst(FLAKY_FAILURES, 503, "0");
             WebhookReceiver gone = WebhookReceiver.start(0).failFirst(-1, 410, null)) {
            String lateUrl = "http://127.0.0.1:" + latePort + "/hooks/alerts";
            String jdbc = "jdbc:h2:file:" + dir.resolve("db").resolve("stopline").toAbsolutePath();
            try (DaemonProcess daemon = DaemonProcess.serve(List.of("-Xmx512m",
                            "-Dstopline.webhooks.urls=" + lateUrl + "," + flaky.url() + "," + gone.url(),
                            "-Dstopline.webhooks.secret=" + WebhookReceiver.SECRET,
                            "-Dstopline.webhooks.retry-later=PT1S"),
                    List.of("--bootstrap-servers", broker.bootstrapServers(), "--jdbc-url", jdbc,
                            "--plans-dir", dir.resolve("plans").toString(), "--data-dir", dir.toString()),
                    dir.resolve("daemon.log"))) {
                send(broker.bootstrapServers());
                long sent = System.nanoTime();
                Set<String> expected = new TreeSet<>();
                for (int e = 0; e < EXPERIMENTS; e++) {
                    daemon.awaitSequence(id(e), SNAPSHOTS, Duration.ofSeconds(60));
                    List<String> stream = new ArrayList<>();
                    for (int k = 1; k <= SNAPSHOTS; k++) {
                        stream.add(snapshot(e, k));
                    }
                    expected.addAll(Oracle.of(Counts.plan(id(e)), id(e), stream).alertIds());
                }
                // sample-ratio alerts of experiments 0 and 1, efficacy stops of 2 and 3 (oracle)
                assertTrue(expected.size() >= 4, "alerts to deliver: " + expected);
                Set<String> raised = new TreeSet<>();
                for (int e = 0; e < EXPERIMENTS; e++) {
                    raised.addAll(daemon.alertIds(id(e)));
                }
                assertEquals(expected, raised, "the daemon raised the oracle's alerts before the late endpoint is up");

                long wait = LATE_BY.toNanos() - (System.nanoTime() - sent);
                if (wait > 0) {
                    Thread.sleep(wait / 1_000_000);
                }
                late = WebhookReceiver.start(latePort);

                Map<String, JsonNode> outbox = awaitOutbox(daemon, expected, Duration.ofSeconds(60));
                Map<String, Instant> created = new TreeMap<>();
                for (JsonNode a : new ObjectMapper().readTree(daemon.getBody("/api/alerts"))) {
                    created.put(a.path("alert").path("id").asText(), Instant.parse(a.path("createdAt").asText()));
                }
                int flakyRounds = 0;
                for (String alert : expected) {
                    assertEquals("delivered", status(outbox, alert, "log"), alert + ": log");
                    assertEquals("delivered", status(outbox, alert, "kafka"), alert + ": kafka");
                    assertEquals("delivered", status(outbox, alert, "webhook:" + lateUrl), alert + ": late endpoint");
                    assertEquals("delivered", status(outbox, alert, "webhook:" + flaky.url()), alert + ": flaky endpoint");
                    assertEquals("abandoned", status(outbox, alert, "webhook:" + gone.url()), alert + ": 410 endpoint");
                    flakyRounds += outbox.get(alert + " webhook:" + flaky.url()).path("attempts").asInt();
                    Duration toKafka = Duration.between(created.get(alert),
                            Instant.parse(outbox.get(alert + " kafka").path("deliveredAt").asText()));
                    assertTrue(toKafka.compareTo(KAFKA_WITHIN) <= 0, alert + ": on the Kafka topic " + toKafka
                            + " after it was raised, while webhook endpoints were down (at most " + KAFKA_WITHIN + ")");
                }
                assertTrue(flakyRounds > expected.size(), "an alert to the flaky endpoint went back to the outbox "
                        + "and was sent in a later round: " + flakyRounds + " rounds for " + expected.size() + " alerts");
                Thread.sleep(2000);                  // a duplicate would come from a later outbox round
                for (WebhookReceiver r : List.of(late, flaky)) {
                    List<String> ids = r.verified().stream().map(WebhookReceiver.Delivery::id).toList();
                    assertEquals(expected, new TreeSet<>(ids), r.url() + ": every alert arrived");
                    assertEquals(ids.size(), new HashSet<>(ids).size(), r.url() + ": no webhook-id twice: " + ids);
                    assertEquals(List.of(), r.refused(), r.url() + ": every signature verified");
                }
                assertEquals(FLAKY_FAILURES, flaky.failed().size(),
                        "the flaky endpoint's 503s were all spent on retries: " + flaky.failed());
                assertEquals(1, gone.failed().size(), "the 410 endpoint was asked once: " + gone.failed());
                assertTrue(gone.verified().isEmpty(), "nothing reached the 410 endpoint after that");
                assertFalse(late.verified().isEmpty(), "the late endpoint got alerts raised before it listened");
                assertTrue(daemon.isAlive(), "the daemon is still running");
            } finally {
                Path keep = Path.of("target", "webhook-outage-it-logs");
                Files.createDirectories(keep);
                Files.copy(dir.resolve("daemon.log"), keep.resolve("daemon.log"), StandardCopyOption.REPLACE_EXISTING);
            }
        } finally {
            if (late != null) {
                late.close();
            }
            broker.close();
            KafkaBrokerExtension.deleteTree(dir);
        }
    }

    private static String status(Map<String, JsonNode> outbox, String alert, String channel) {
        JsonNode d = outbox.get(alert + " " + channel);
        return d == null ? "(no outbox row)" : d.path("status").asText();
    }

    private static void send(String servers) throws Exception {
        try (KafkaProducer<String, String> producer = TestKafka.producer(servers)) {
            for (int k = 1; k <= SNAPSHOTS; k++) {
                for (int e = 0; e < EXPERIMENTS; e++) {
                    producer.send(new ProducerRecord<>("stopline.counts", id(e), snapshot(e, k))).get();
                }
            }
        }
    }

    /**
     * Waits until every outbox row of the expected alerts (five channels each) exists and none is pending;
     * returns each row (status, attempts, last error) by "alert-id channel" (from {@code GET /api/alerts}).
     */
    private static Map<String, JsonNode> awaitOutbox(DaemonProcess daemon, Set<String> alerts, Duration max)
            throws Exception {
        ObjectMapper json = new ObjectMapper();
        Map<String, JsonNode> status = new TreeMap<>();
        long deadline = System.nanoTime() + max.toNanos();
        while (true) {
            status.clear();
            for (JsonNode a : json.readTree(daemon.getBody("/api/alerts"))) {
                String id = a.path("alert").path("id").asText();
                if (alerts.contains(id)) {
                    for (JsonNode d : a.path("deliveries")) {
                        status.put(id + " " + d.path("channel").asText(), d);
                    }
                }
            }
            boolean settled = status.size() == alerts.size() * 5
                    && status.values().stream().noneMatch(d -> "pending".equals(d.path("status").asText()));
            if (settled || System.nanoTime() > deadline) {
                return status;
            }
            Thread.sleep(250);
        }
    }
}
