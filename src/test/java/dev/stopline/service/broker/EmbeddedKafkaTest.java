package dev.stopline.service.broker;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.Properties;
import java.util.Set;
import java.util.concurrent.TimeUnit;

import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.admin.AdminClientConfig;
import org.apache.kafka.clients.admin.TopicDescription;
import org.apache.kafka.clients.consumer.ConsumerConfig;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.consumer.KafkaConsumer;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerConfig;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.clients.producer.RecordMetadata;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.serialization.StringDeserializer;
import org.apache.kafka.common.serialization.StringSerializer;
import org.junit.jupiter.api.AfterEach;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

import dev.stopline.testing.FreePorts;
import dev.stopline.testing.KafkaBrokerExtension;

class EmbeddedKafkaTest {
    /** Real-broker start on a 2-core shared machine: generous, but bounded (common practice). */
    private static final Duration START = Duration.ofSeconds(60);
    /** The close bound the daemon uses (the brief's 8 s), plus 2 s for thread scheduling. */
    private static final long CLOSE_BOUND_MS = 8_000 + 2_000;

    private final List<EmbeddedKafka> started = new ArrayList<>();
    private Path dir;

    @BeforeAll
    static void trapKafkaExit() {
        KafkaBrokerExtension.trapExit();
        KafkaBrokerExtension.quietKafkaLogging();
    }

    @AfterEach
    void cleanUp() {
        started.forEach(EmbeddedKafka::close);
        KafkaBrokerExtension.deleteTree(dir);
    }

    @Test
    void start_returnsOnlyWhenBrokerAnswersDescribeCluster_andCreatesNamedTopics() throws Exception {
        dir = KafkaBrokerExtension.tempDir("stopline-kafka-test-");
        EmbeddedKafka kafka = track(newBroker(dir).topic("checkout-redesign.counts", 3).build().start());

        assertTrue(kafka.isRunning());
        assertTrue(Files.exists(dir.resolve("meta.properties")), "storage formatted: meta.properties in " + dir);
        try (Admin admin = admin(kafka)) {
            // a single combined broker+controller node
            assertEquals(1, admin.describeCluster().nodes().get(5, TimeUnit.SECONDS).size());
            Map<String, TopicDescription> d = admin.describeTopics(Set.of("checkout-redesign.counts"))
                    .allTopicNames().get(10, TimeUnit.SECONDS);
            assertEquals(3, d.get("checkout-redesign.counts").partitions().size(), "configured partitions");
        }
    }

    @Test
    void autoCreatedTopic_hasOnePartitionByDefault() throws Exception {
        dir = KafkaBrokerExtension.tempDir("stopline-kafka-test-");
        EmbeddedKafka kafka = track(newBroker(dir).build().start());

        produce(kafka, "gift-wrap-upsell.events", "k", "v"); // topic did not exist: auto-created
        try (Admin admin = admin(kafka)) {
            TopicDescription d = admin.describeTopics(Set.of("gift-wrap-upsell.events")).allTopicNames()
                    .get(10, TimeUnit.SECONDS).get("gift-wrap-upsell.events");
            assertEquals(1, d.partitions().size(), "num.partitions default 1");
            assertEquals(1, d.partitions().get(0).replicas().size(), "replication factor 1");
        }
    }

    @Test
    void restart_onSameDataDir_andNewPorts_stillServesRecordWrittenBefore() throws Exception {
        dir = KafkaBrokerExtension.tempDir("stopline-kafka-test-");
        EmbeddedKafka first = track(newBroker(dir).build().start());
        RecordMetadata written = produce(first, "recommendations-v2.counts", "exp-1", "before-restart");
        long t0 = System.nanoTime();
        first.close();
        long closeMs = TimeUnit.NANOSECONDS.toMillis(System.nanoTime() - t0);
        assertFalse(first.isRunning());
        assertTrue(closeMs < CLOSE_BOUND_MS, "close took " + closeMs + " ms");

        // new free ports: the static voter set must not tie the data dir to the old controller port
        EmbeddedKafka second = track(newBroker(dir).build().start());
        List<ConsumerRecord<String, String>> got = readFromStart(second, "recommendations-v2.counts", 1);

        assertEquals(1, got.size());
        assertEquals("exp-1", got.get(0).key());
        assertEquals("before-restart", got.get(0).value());
        assertEquals(written.offset(), got.get(0).offset());
    }

    @Test
    void start_onAPortInUse_failsWithinTheStartTimeout_andLeavesTheDirReusable() throws Exception {
        dir = KafkaBrokerExtension.tempDir("stopline-kafka-test-");
        try (java.net.ServerSocket taken = new java.net.ServerSocket(0, 1, java.net.InetAddress.getLoopbackAddress())) {
            EmbeddedKafka blocked = EmbeddedKafka.builder().port(taken.getLocalPort())
                    .controllerPort(FreePorts.pick()).dataDir(dir).startTimeout(Duration.ofSeconds(30)).build();
            long t0 = System.nanoTime();
            IllegalStateException e = assertThrows(IllegalStateException.class, blocked::start);
            assertTrue(e.getMessage().contains("Address already in use"), e.getMessage());
            long ms = TimeUnit.NANOSECONDS.toMillis(System.nanoTime() - t0);
            assertFalse(blocked.isRunning());
            assertTrue(ms < 30_000 + CLOSE_BOUND_MS, "failed after " + ms + " ms: " + e);
        }
        EmbeddedKafka ok = track(newBroker(dir).build().start()); // lock released, format kept
        assertTrue(ok.isRunning());
    }

    @Test
    void secondBroker_onADataDirInUse_failsClearly_andTheFirstKeepsRunning() throws Exception {
        dir = KafkaBrokerExtension.tempDir("stopline-kafka-test-");
        EmbeddedKafka first = track(newBroker(dir).build().start());
        int exitsBefore = KafkaBrokerExtension.exitRequests();
        EmbeddedKafka second = newBroker(dir).build();

        IllegalStateException e = assertThrows(IllegalStateException.class, second::start);

        assertTrue(e.getMessage().contains("in use"), e.getMessage());
        assertFalse(second.isRunning());
        // regression: without our own lock the second controller read the first's metadata log mid-write,
        // reported corruption and asked Kafka's Exit to halt the JVM
        assertEquals(exitsBefore, KafkaBrokerExtension.exitRequests(), "Kafka asked to exit/halt");
        produce(first, "checkout-redesign.after-lock", "k", "still-fine");
        assertEquals("still-fine", readFromStart(first, "checkout-redesign.after-lock", 1).get(0).value());
    }

    @Test
    void start_twice_isRejected_andCloseIsIdempotent() {
        dir = KafkaBrokerExtension.tempDir("stopline-kafka-test-");
        EmbeddedKafka kafka = track(newBroker(dir).build().start());

        IllegalStateException e = assertThrows(IllegalStateException.class, kafka::start);
        assertTrue(e.getMessage().contains("already running"), e.getMessage());
        kafka.close();
        kafka.close();
        assertFalse(kafka.isRunning());
    }

    @Test
    void builder_rejectsEqualPortsAndNonPositivePartitions() {
        IllegalArgumentException ports = assertThrows(IllegalArgumentException.class,
                () -> EmbeddedKafka.builder().port(19092).controllerPort(19092).build());
        assertTrue(ports.getMessage().contains("must differ"), ports.getMessage());
        IllegalArgumentException parts = assertThrows(IllegalArgumentException.class,
                () -> EmbeddedKafka.builder().topic("t", 0));
        assertTrue(parts.getMessage().contains(">= 1"), parts.getMessage());
        assertThrows(IllegalArgumentException.class, () -> EmbeddedKafka.builder().port(70000));
        assertThrows(IllegalArgumentException.class, () -> EmbeddedKafka.builder().closeTimeout(Duration.ZERO));
    }

    @Test
    void defaults_areTheDaemonsPortsAndDataDir() {
        EmbeddedKafka kafka = EmbeddedKafka.builder().build(); // not started
        assertEquals("127.0.0.1:9092", kafka.bootstrapServers()); // Kafka's conventional port (common practice)
        assertEquals(Path.of("data", "kafka"), kafka.dataDir());
        Map<String, String> p = kafka.brokerProperties();
        assertEquals("broker,controller", p.get("process.roles"));
        assertEquals("1@127.0.0.1:9093", p.get("controller.quorum.voters"));
        assertEquals("1", p.get("num.partitions"));
        assertEquals("true", p.get("auto.create.topics.enable"));
    }

    @Test
    void quietBrokerLogging_silencesBrokerInfo_butKeepsALevelSomeoneConfigured() {
        EmbeddedKafka.quietBrokerLogging();
        assertFalse(java.util.logging.Logger.getLogger("kafka.server.BrokerServer")
                .isLoggable(java.util.logging.Level.INFO), "broker INFO is quiet");
        java.util.logging.Logger raft = java.util.logging.Logger.getLogger("org.apache.kafka.raft");
        java.util.logging.Level before = raft.getLevel();
        try {
            raft.setLevel(java.util.logging.Level.FINE); // as if quarkus.log.category set it
            EmbeddedKafka.quietBrokerLogging();
            assertEquals(java.util.logging.Level.FINE, raft.getLevel(), "an explicit level wins");
        } finally {
            raft.setLevel(before);
        }
    }

    private EmbeddedKafka track(EmbeddedKafka k) {
        started.add(k);
        return k;
    }

    private static EmbeddedKafka.Builder newBroker(Path dir) {
        int[] ports = FreePorts.pickTwo();
        return EmbeddedKafka.builder().port(ports[0]).controllerPort(ports[1]).dataDir(dir).startTimeout(START);
    }

    static Admin admin(EmbeddedKafka k) {
        return Admin.create(Map.of(AdminClientConfig.BOOTSTRAP_SERVERS_CONFIG, k.bootstrapServers()));
    }

    static RecordMetadata produce(EmbeddedKafka k, String topic, String key, String value) throws Exception {
        Properties p = new Properties();
        p.put(ProducerConfig.BOOTSTRAP_SERVERS_CONFIG, k.bootstrapServers());
        p.put(ProducerConfig.ACKS_CONFIG, "all");
        try (KafkaProducer<String, String> producer = new KafkaProducer<>(p, new StringSerializer(),
                new StringSerializer())) {
            return producer.send(new ProducerRecord<>(topic, key, value)).get(30, TimeUnit.SECONDS);
        }
    }

    static List<ConsumerRecord<String, String>> readFromStart(EmbeddedKafka k, String topic, int want) {
        Properties p = new Properties();
        p.put(ConsumerConfig.BOOTSTRAP_SERVERS_CONFIG, k.bootstrapServers());
        List<ConsumerRecord<String, String>> out = new ArrayList<>();
        try (KafkaConsumer<String, String> c = new KafkaConsumer<>(p, new StringDeserializer(),
                new StringDeserializer())) {
            TopicPartition tp = new TopicPartition(topic, 0);
            c.assign(List.of(tp));
            c.seekToBeginning(List.of(tp));
            long deadline = System.nanoTime() + KafkaBrokerExtension.RECORD_WAIT.toNanos();
            while (out.size() < want && System.nanoTime() < deadline) {
                c.poll(Duration.ofMillis(200)).forEach(out::add);
            }
        }
        return out;
    }

    static String utf8(byte[] b) {
        return b == null ? null : new String(b, StandardCharsets.UTF_8);
    }
}
