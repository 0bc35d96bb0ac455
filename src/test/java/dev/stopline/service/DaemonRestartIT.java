package dev.stopline.service;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.ObjectMapper;
import dev.stopline.service.broker.EmbeddedKafka;
import dev.stopline.testing.Counts;
import dev.stopline.testing.DaemonProcess;
import dev.stopline.testing.FreePorts;
import dev.stopline.testing.KafkaBrokerExtension;
import dev.stopline.testing.Oracle;
import dev.stopline.testing.TestKafka;
import dev.stopline.wire.Snapshot;
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
 * The packaged daemon killed with SIGKILL in the middle of a stream and started again as a new process on
 * the same database: every look is stored exactly once and no alert is raised twice. The oracle is the
 * pure evaluator run in this JVM over the same snapshots.
 */
class DaemonRestartIT {
    private static final String ID = "restart-check";
    private static final int SNAPSHOTS = 60;
    private static EmbeddedKafka broker;
    private static Path dir;

    @BeforeAll
    static void startBroker() throws Exception {
        KafkaBrokerExtension.trapExit();
        KafkaBrokerExtension.quietKafkaLogging();
        dir = Files.createTempDirectory("stopline-restart-");
        int[] ports = FreePorts.pickTwo();
        broker = EmbeddedKafka.builder().port(ports[0]).controllerPort(ports[1]).dataDir(dir.resolve("kafka"))
                .topic("stopline.counts", 1).build().start();
        Files.createDirectories(dir.resolve("plans"));
        Files.writeString(dir.resolve("plans").resolve(ID + ".yaml"), plan());
    }

    @AfterAll
    static void stopBroker() {
        if (broker != null) {
            broker.close();
        }
        KafkaBrokerExtension.deleteTree(dir);
    }

    /** 20 looks, so that a kill lands between looks; 20,000 units per arm. */
    private static String plan() {
        return Counts.plan(ID).replace("looks: 5", "looks: 20").replace("maxUnitsPerArm: 10000", "maxUnitsPerArm: 20000");
    }

    /** Snapshot k: 300 more units per arm each time; from k = 30 the split drifts (an assignment bug). */
    private static List<String> stream() {
        List<String> out = new ArrayList<>();
        long c = 0;
        long t = 0;
        for (int k = 1; k <= SNAPSHOTS; k++) {
            c += k >= 30 ? 360 : 300;
            t += k >= 30 ? 240 : 300;
            out.add(Counts.proportion(ID, k, "orders", c, c / 10, t, t / 10 + t / 400));
        }
        return out;
    }

    @Test
    void killedMidStream_restartedOnTheSameDatabase_losesNoLookAndRepeatsNoAlert() throws Exception {
        List<String> stream = stream();
        String jdbc = "jdbc:h2:file:" + dir.resolve("db").resolve("stopline").toAbsolutePath();
        Path log = dir.resolve("daemon.log");
        ObjectMapper json = new ObjectMapper();

        try (KafkaProducer<String, String> producer = TestKafka.producer(broker.bootstrapServers())) {
            DaemonProcess first = DaemonProcess.start(broker.bootstrapServers(), jdbc, dir.resolve("plans"), log, "--data-dir", dir.toString());
            try {
                for (int k = 0; k < SNAPSHOTS; k++) {
                    producer.send(new ProducerRecord<>("stopline.counts", ID, stream.get(k))).get();
                    if (k == 34) {
                        first.awaitSequence(ID, 20, Duration.ofSeconds(120));
                        first.kill9();
                        assertFalse(first.isAlive(), "killed");
                    }
                }
            } finally {
                first.close();
            }
        }
        try (DaemonProcess second = DaemonProcess.start(broker.bootstrapServers(), jdbc, dir.resolve("plans"), log, "--data-dir", dir.toString())) {
            second.awaitSequence(ID, SNAPSHOTS, Duration.ofSeconds(120));

            List<Long> primary = second.primaryLookSequences(ID);
            List<String> alertIds = second.alertIds(ID);

            Oracle oracle = Oracle.of(plan(), ID, stream);
            assertEquals(oracle.primaryLookSequences(), primary, "each look stored once, none lost");
            assertEquals(new HashSet<>(oracle.alertIds()), new HashSet<>(alertIds), "the same alerts as the oracle");
            assertEquals(alertIds.size(), new HashSet<>(alertIds).size(), "no alert twice");
            assertTrue(alertIds.contains(ID + "/sample-ratio/-/1"), "the drifting split was caught: " + alertIds);
        }
    }
}
