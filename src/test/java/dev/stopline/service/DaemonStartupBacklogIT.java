package dev.stopline.service;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;

import com.fasterxml.jackson.databind.ObjectMapper;
import dev.stopline.service.broker.EmbeddedKafka;
import dev.stopline.testing.Counts;
import dev.stopline.testing.DaemonProcess;
import dev.stopline.testing.FreePorts;
import dev.stopline.testing.KafkaBrokerExtension;
import dev.stopline.testing.TestKafka;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.junit.jupiter.api.Test;

/**
 * A daemon started on a backlog: the counts topic already holds snapshots of every experiment whose
 * plan file is in the plans directory. The consumer may poll while the plans are still being
 * registered; no snapshot may be dead-lettered as an unknown experiment for that (it was, for a
 * few hundred of 320 experiments, before ingest waited for the plans).
 */
class DaemonStartupBacklogIT {
    /** Enough plans that registering them takes longer than the consumer needs to join and fetch. */
    private static final int EXPERIMENTS = 300;
    private static final int SNAPSHOTS = 2;

    private static String id(int i) {
        return "startup-backlog-" + i;
    }

    /** Waits until evaluated, duplicate and dead-lettered snapshots add up to {@code records}; returns that scrape. */
    private static String awaitHandled(DaemonProcess daemon, int records, Duration max) throws InterruptedException {
        long deadline = System.nanoTime() + max.toNanos();
        while (true) {
            String metrics = daemon.getBody("/q/metrics");
            double handled = metrics.lines()
                    .filter(l -> l.startsWith("stopline_snapshots_total{") || l.startsWith("stopline_dead_letters_total{"))
                    .mapToDouble(l -> Double.parseDouble(l.substring(l.lastIndexOf(' ') + 1))).sum();
            if (handled >= records) {
                return metrics;
            }
            if (System.nanoTime() > deadline) {
                throw new AssertionError("the daemon handled " + handled + " of " + records + " records within " + max);
            }
            Thread.sleep(200);
        }
    }

    @Test
    void backlogWaitingAtStart_isEvaluatedInFull_andNothingIsDeadLettered() throws Exception {
        KafkaBrokerExtension.trapExit();
        KafkaBrokerExtension.quietKafkaLogging();
        Path dir = Files.createTempDirectory("stopline-startup-backlog-");
        int[] ports = FreePorts.pickTwo();
        Path plans = Files.createDirectories(dir.resolve("plans"));
        try (EmbeddedKafka broker = EmbeddedKafka.builder().port(ports[0]).controllerPort(ports[1])
                .dataDir(dir.resolve("kafka")).topic("stopline.counts", 1).build().start()) {
            try (KafkaProducer<String, String> producer = TestKafka.producer(broker.bootstrapServers())) {
                for (int k = 1; k <= SNAPSHOTS; k++) {
                    for (int i = 0; i < EXPERIMENTS; i++) {
                        long n = 400L * k;
                        producer.send(new ProducerRecord<>("stopline.counts", id(i),
                                Counts.proportion(id(i), k, "orders", n, n / 10, n, n / 10)));
                    }
                }
                producer.flush();
            }
            for (int i = 0; i < EXPERIMENTS; i++) {
                Files.writeString(plans.resolve(id(i) + ".yaml"), Counts.plan(id(i)));
            }
            String jdbc = "jdbc:h2:file:" + dir.resolve("db").resolve("stopline").toAbsolutePath();
            try (DaemonProcess daemon = DaemonProcess.start(broker.bootstrapServers(), jdbc, plans,
                    dir.resolve("daemon.log"), "--data-dir", dir.toString())) {
                String metrics = awaitHandled(daemon, EXPERIMENTS * SNAPSHOTS, Duration.ofSeconds(180));
                assertFalse(metrics.contains("stopline_dead_letters_total{"), () -> "dead-lettered: "
                        + metrics.lines().filter(l -> l.startsWith("stopline_dead_letters_total")).toList());
                ObjectMapper json = new ObjectMapper();
                for (int i = 0; i < EXPERIMENTS; i += 37) {
                    assertEquals(SNAPSHOTS, json.readTree(daemon.getBody("/api/experiments/" + id(i)))
                            .path("summary").path("snapshots").asLong(), id(i));
                }
            }
        } finally {
            KafkaBrokerExtension.deleteTree(dir);
        }
    }
}
