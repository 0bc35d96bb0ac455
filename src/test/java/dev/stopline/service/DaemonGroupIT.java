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
import dev.stopline.testing.Oracle;
import dev.stopline.testing.PostgresCluster;
import dev.stopline.testing.TestKafka;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.List;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/**
 * Three daemons in one consumer group on a partitioned counts topic and one database, with forced
 * rebalances (an instance stopped mid-stream, another started): every experiment's looks are stored
 * exactly once and its alerts raised once, as the pure evaluator says they should be.
 */
class DaemonGroupIT {
    private static final int EXPERIMENTS = 9;
    private static final int SNAPSHOTS = 30;
    private static EmbeddedKafka broker;
    private static Path dir;
    /** Several daemons share one database: PostgreSQL, as in production. */
    private static final PostgresCluster PG = new PostgresCluster();

    @BeforeAll
    static void start() throws Exception {
        KafkaBrokerExtension.trapExit();
        KafkaBrokerExtension.quietKafkaLogging();
        dir = Files.createTempDirectory("stopline-group-");
        PG.start();
        int[] ports = FreePorts.pickTwo();
        broker = EmbeddedKafka.builder().port(ports[0]).controllerPort(ports[1]).dataDir(dir.resolve("kafka"))
                .topic("stopline.counts", 6).build().start();
        Files.createDirectories(dir.resolve("plans"));
        for (int e = 0; e < EXPERIMENTS; e++) {
            Files.writeString(dir.resolve("plans").resolve(id(e) + ".yaml"), plan(e));
        }
    }

    @AfterAll
    static void stop() throws Exception {
        if (broker != null) {
            broker.close();
        }
        PG.stop();
        Path keep = Path.of("target", "group-it-logs");
        Files.createDirectories(keep);
        try (var logs = Files.list(dir)) {
            for (Path log : logs.filter(f -> f.toString().endsWith(".log")).toList()) {
                Files.copy(log, keep.resolve(log.getFileName()), java.nio.file.StandardCopyOption.REPLACE_EXISTING);
            }
        }
        KafkaBrokerExtension.deleteTree(dir);
    }

    private static String id(int e) {
        return "group-check-" + e;
    }

    private static String plan(int e) {
        return Counts.plan(id(e)).replace("looks: 5", "looks: 10");
    }

    /** Experiment e, snapshot k: 400 more units per arm each; odd experiments lift orders, some drift in split. */
    private static String snapshot(int e, int k) {
        long c = 400L * k + (e % 3 == 0 && k > 15 ? 60L * (k - 15) : 0);
        long t = 400L * k;
        long tc = t / 10 + (e % 2 == 1 ? t / 40 : 0);
        return Counts.proportion(id(e), k, "orders", c, c / 10, t, tc);
    }

    @Test
    void threeInstancesWithRebalances_storeEveryLookOnce_andAlertOnce() throws Exception {
        String jdbc = PG.jdbcUrl() + (PG.jdbcUrl().contains("?") ? "&" : "?") + "user=" + PG.user();
        Path plans = dir.resolve("plans");
        List<DaemonProcess> daemons = new ArrayList<>();
        ObjectMapper json = new ObjectMapper();
        try {
            for (int i = 0; i < 3; i++) {
                daemons.add(DaemonProcess.start(broker.bootstrapServers(), jdbc, plans, dir.resolve("daemon-" + i + ".log"),
                        "--data-dir", dir.toString()));
            }
            try (KafkaProducer<String, String> producer = TestKafka.producer(broker.bootstrapServers())) {
                for (int k = 1; k <= SNAPSHOTS; k++) {
                    for (int e = 0; e < EXPERIMENTS; e++) {
                        producer.send(new ProducerRecord<>("stopline.counts", id(e), snapshot(e, k))).get();
                    }
                    if (k == 10) {
                        daemons.get(0).terminate(Duration.ofSeconds(30));      // rebalance: one leaves
                    }
                    if (k == 20) {
                        daemons.add(DaemonProcess.start(broker.bootstrapServers(), jdbc, plans,
                                dir.resolve("daemon-3.log"), "--data-dir", dir.toString()));   // one joins
                    }
                }
            }
            DaemonProcess reader = daemons.get(1);
            long deadline = System.nanoTime() + Duration.ofSeconds(180).toNanos();
            while (!allDone(reader, json) && System.nanoTime() < deadline) {
                Thread.sleep(500);
            }
            assertTrue(allDone(reader, json), "every experiment reached its last snapshot");

            for (int e = 0; e < EXPERIMENTS; e++) {
                List<String> stream = new ArrayList<>();
                for (int k = 1; k <= SNAPSHOTS; k++) {
                    stream.add(snapshot(e, k));
                }
                Oracle oracle = Oracle.of(plan(e), id(e), stream);
                List<String> alerts = reader.alertIds(id(e));
                assertEquals(oracle.primaryLookSequences(), reader.primaryLookSequences(id(e)),
                        id(e) + ": looks stored once each, none lost");
                assertEquals(new HashSet<>(oracle.alertIds()), new HashSet<>(alerts), id(e) + ": the oracle's alerts");
                assertEquals(alerts.size(), new HashSet<>(alerts).size(), id(e) + ": no alert twice");
            }
        } finally {
            daemons.forEach(DaemonProcess::close);
        }
    }

    private static boolean allDone(DaemonProcess d, ObjectMapper json) throws Exception {
        for (int e = 0; e < EXPERIMENTS; e++) {
            JsonNode x = json.readTree(d.getBody("/api/experiments/" + id(e)));
            if (x.path("summary").path("lastSequence").asLong(-1) < SNAPSHOTS) {
                return false;
            }
        }
        return true;
    }
}
