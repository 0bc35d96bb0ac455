package dev.stopline.service;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
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
import java.util.List;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.junit.jupiter.api.Test;

/**
 * The broker goes away while the daemon runs and comes back on the same address and data: the daemon
 * reconnects by itself and evaluates everything produced after the restart, with nothing dead-lettered.
 */
class DaemonBrokerRestartIT {
    private static final String ID = "broker-restart-check";

    private static EmbeddedKafka broker(Path dir, int[] ports) {
        return EmbeddedKafka.builder().port(ports[0]).controllerPort(ports[1]).dataDir(dir.resolve("kafka"))
                .topic("stopline.counts", 1).build().start();
    }

    private static void send(String servers, int from, int to) throws Exception {
        try (KafkaProducer<String, String> producer = TestKafka.producer(servers)) {
            for (int k = from; k <= to; k++) {
                long n = 500L * k;
                producer.send(new ProducerRecord<>("stopline.counts", ID,
                        Counts.proportion(ID, k, "orders", n, n / 10, n, n / 10))).get();
            }
        }
    }

    @Test
    void brokerRestartedUnderARunningDaemon_isRejoined_andLaterSnapshotsAreAllEvaluated() throws Exception {
        KafkaBrokerExtension.trapExit();
        KafkaBrokerExtension.quietKafkaLogging();
        Path dir = Files.createTempDirectory("stopline-broker-restart-");
        int[] ports = FreePorts.pickTwo();
        Files.createDirectories(dir.resolve("plans"));
        Files.writeString(dir.resolve("plans").resolve(ID + ".yaml"), Counts.plan(ID).replace("looks: 5", "looks: 10"));
        ObjectMapper json = new ObjectMapper();
        EmbeddedKafka broker = broker(dir, ports);
        String servers = broker.bootstrapServers();
        String jdbc = "jdbc:h2:file:" + dir.resolve("db").resolve("stopline").toAbsolutePath();
        try (DaemonProcess daemon = DaemonProcess.start(servers, jdbc, dir.resolve("plans"), dir.resolve("daemon.log"),
                "--data-dir", dir.toString())) {
            send(servers, 1, 10);
            daemon.awaitSequence(ID, 10, Duration.ofSeconds(120));

            broker.close();
            Thread.sleep(3000);                       // the daemon's clients see the broker gone
            broker = broker(dir, ports);              // same ports, same data
            send(servers, 11, 20);
            daemon.awaitSequence(ID, 20, Duration.ofSeconds(180));

            JsonNode e = json.readTree(daemon.getBody("/api/experiments/" + ID));
            assertEquals(20, e.path("summary").path("snapshots").asLong(), "every snapshot evaluated once");
            List<Long> looks = daemon.primaryLookSequences(ID);
            // 500 per arm per snapshot = fraction 0.05 each; looks every 0.1: sequences 2, 4, ..., 20
            assertEquals(List.of(2L, 4L, 6L, 8L, 10L, 12L, 14L, 16L, 18L, 20L), looks);
            String metrics = daemon.getBody("/q/metrics");
            assertTrue(!metrics.contains("stopline_dead_letters_total{"), "nothing dead-lettered");
        } finally {
            broker.close();
            KafkaBrokerExtension.deleteTree(dir);
        }
    }
}
