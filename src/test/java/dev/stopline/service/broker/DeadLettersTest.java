package dev.stopline.service.broker;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.Properties;
import java.util.UUID;
import java.util.concurrent.TimeUnit;

import org.apache.kafka.clients.consumer.ConsumerConfig;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.consumer.KafkaConsumer;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerConfig;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.header.internals.RecordHeaders;
import org.apache.kafka.common.serialization.ByteArrayDeserializer;
import org.apache.kafka.common.serialization.ByteArraySerializer;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;

import dev.stopline.testing.KafkaBrokerExtension;

@ExtendWith(KafkaBrokerExtension.class)
class DeadLettersTest {

    @Test
    void deadLetter_roundTripsThroughARealBroker_withOriginalBytesAndReasonHeaders(EmbeddedKafka kafka)
            throws Exception {
        String source = "stopline.counts.test-" + UUID.randomUUID();
        byte[] key = "checkout-redesign".getBytes(StandardCharsets.UTF_8);
        byte[] value = "{\"look\":3,\"control\":{\"n\":1200},\"treatment\":{\"n\":1180}}"
                .getBytes(StandardCharsets.UTF_8);
        RecordHeaders trace = new RecordHeaders();
        trace.add("traceparent", "00-0af7651916cd43dd8448eb211c80319c-b7ad6b7169203331-01".getBytes(
                StandardCharsets.UTF_8)); // W3C Trace Context example format (common practice)
        try (KafkaProducer<byte[], byte[]> p = producer(kafka)) {
            p.send(new ProducerRecord<>(source, null, key, value, trace)).get(30, TimeUnit.SECONDS);
            ConsumerRecord<byte[], byte[]> original = readOne(kafka, source, r -> true);

            p.send(DeadLetters.of(original, dev.stopline.wire.Reason.OUT_OF_ORDER.code(), "look 3 arrived after look 4"))
                    .get(30, TimeUnit.SECONDS);
            ConsumerRecord<byte[], byte[]> dead = readOne(kafka, DeadLetters.TOPIC, r -> DeadLetters
                    .read(r.headers()).map(l -> l.sourceTopic().equals(source)).orElse(false));

            assertArrayEquals(key, dead.key());
            assertArrayEquals(value, dead.value());
            DeadLetters.Letter l = DeadLetters.read(dead.headers()).orElseThrow();
            assertEquals(new DeadLetters.Letter("out-of-order", "look 3 arrived after look 4", source,
                    original.partition(), original.offset()), l);
            assertEquals("0", text(dead, DeadLetters.SOURCE_PARTITION), "decimal text, readable on a console");
            assertEquals(text(original, "traceparent"), text(dead, "traceparent"), "original headers kept");
        }
    }

    @Test
    void deadLetteredAgain_replacesOldStoplineHeaders_andKeepsOthers() {
        RecordHeaders old = new RecordHeaders();
        old.add("traceparent", new byte[] {1});
        old.add(DeadLetters.REASON, "malformed".getBytes(StandardCharsets.UTF_8));
        old.add(DeadLetters.SOURCE_OFFSET, "7".getBytes(StandardCharsets.UTF_8));

        ProducerRecord<byte[], byte[]> r = DeadLetters.of("stopline.counts", 2, 99L, null, new byte[] {9}, old,
                dev.stopline.wire.Reason.UNKNOWN_EXPERIMENT.code(), "no experiment 'gift-wrap-upsell' configured");

        assertEquals(DeadLetters.TOPIC, r.topic());
        assertNull(r.partition(), "partition chosen by key, like the original");
        List<String> keys = new ArrayList<>();
        r.headers().forEach(h -> keys.add(h.key()));
        assertEquals(List.of("traceparent", "stopline-reason", "stopline-detail", "stopline-source-topic",
                "stopline-source-partition", "stopline-source-offset"), keys);
        DeadLetters.Letter l = DeadLetters.read(r.headers()).orElseThrow();
        assertEquals("unknown-experiment", l.reason());
        assertEquals(99L, l.sourceOffset());
    }

    @Test
    void detail_isCutAtTheLimit_andReasonMustBeACode() {
        String longText = "x".repeat(5_000);
        ProducerRecord<byte[], byte[]> r = DeadLetters.of("t", 0, 0, null, null, null, "malformed", longText);
        String detail = DeadLetters.read(r.headers()).orElseThrow().detail();
        assertEquals(DeadLetters.MAX_DETAIL, detail.length());
        assertTrue(detail.endsWith("\u2026"));
        for (String bad : new String[] {"Out-Of-Order", "out_of_order", "-x", "x-", "", "out of order"}) {
            IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
                    () -> DeadLetters.of("t", 0, 0, null, null, null, bad, "d"), bad);
            assertTrue(e.getMessage().contains("lower-case"), e.getMessage());
        }
        assertThrows(IllegalArgumentException.class, () -> DeadLetters.of("t", -1, 0, null, null, null, "x", "d"));
        assertTrue(DeadLetters.read(new RecordHeaders()).isEmpty(), "a plain record is not a dead letter");
    }

    private static String text(ConsumerRecord<byte[], byte[]> r, String key) {
        return new String(r.headers().lastHeader(key).value(), StandardCharsets.UTF_8);
    }

    private static KafkaProducer<byte[], byte[]> producer(EmbeddedKafka k) {
        Properties p = new Properties();
        p.put(ProducerConfig.BOOTSTRAP_SERVERS_CONFIG, k.bootstrapServers());
        p.put(ProducerConfig.ACKS_CONFIG, "all");
        return new KafkaProducer<>(p, new ByteArraySerializer(), new ByteArraySerializer());
    }

    /** The first record of partition 0 of {@code topic} that {@code match} accepts, within the wait. */
    private static ConsumerRecord<byte[], byte[]> readOne(EmbeddedKafka k, String topic,
            java.util.function.Predicate<ConsumerRecord<byte[], byte[]>> match) {
        Properties p = new Properties();
        p.put(ConsumerConfig.BOOTSTRAP_SERVERS_CONFIG, k.bootstrapServers());
        try (KafkaConsumer<byte[], byte[]> c = new KafkaConsumer<>(p, new ByteArrayDeserializer(),
                new ByteArrayDeserializer())) {
            TopicPartition tp = new TopicPartition(topic, 0);
            c.assign(List.of(tp));
            c.seekToBeginning(List.of(tp));
            long deadline = System.nanoTime() + KafkaBrokerExtension.RECORD_WAIT.toNanos();
            while (System.nanoTime() < deadline) {
                for (ConsumerRecord<byte[], byte[]> r : c.poll(Duration.ofMillis(200))) {
                    if (match.test(r)) {
                        return r;
                    }
                }
            }
        }
        throw new AssertionError("no matching record on " + topic + " within " + KafkaBrokerExtension.RECORD_WAIT);
    }
}
