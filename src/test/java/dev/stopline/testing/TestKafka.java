package dev.stopline.testing;

import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.Properties;
import java.util.UUID;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.consumer.KafkaConsumer;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.common.serialization.ByteArrayDeserializer;
import org.apache.kafka.common.serialization.ByteArraySerializer;
import org.apache.kafka.common.serialization.StringDeserializer;
import org.apache.kafka.common.serialization.StringSerializer;

/** Plain Kafka clients against the shared test broker. */
public final class TestKafka {
    private TestKafka() {
    }

    /** A producer of string keys and values to {@code servers}, every send acknowledged by all replicas. */
    public static KafkaProducer<String, String> producer(String servers) {
        Properties p = new Properties();
        p.put("bootstrap.servers", servers);
        p.put("key.serializer", StringSerializer.class.getName());
        p.put("value.serializer", StringSerializer.class.getName());
        p.put("acks", "all");
        return new KafkaProducer<>(p);
    }

    /** A producer of string keys and raw byte values to {@code servers}, every send acknowledged by all replicas. */
    public static KafkaProducer<String, byte[]> bytesProducer(String servers) {
        Properties p = new Properties();
        p.put("bootstrap.servers", servers);
        p.put("key.serializer", StringSerializer.class.getName());
        p.put("value.serializer", ByteArraySerializer.class.getName());
        p.put("acks", "all");
        return new KafkaProducer<>(p);
    }

    /** Sends records synchronously (each acknowledged by the broker before the next). */
    public static void send(String topic, String key, byte[]... values) {
        try (KafkaProducer<String, byte[]> producer = bytesProducer(KafkaBrokerExtension.bootstrapServers())) {
            for (byte[] v : values) {
                producer.send(new ProducerRecord<>(topic, key, v)).get();
            }
        } catch (Exception e) {
            throw new IllegalStateException("send to " + topic + " failed", e);
        }
    }

    public static void send(String topic, String key, String... values) {
        byte[][] bytes = new byte[values.length][];
        for (int i = 0; i < values.length; i++) {
            bytes[i] = values[i].getBytes(StandardCharsets.UTF_8);
        }
        send(topic, key, bytes);
    }

    /** Every record of a topic from the beginning, read until {@code quiet} passes with nothing new. */
    public static List<ConsumerRecord<String, byte[]>> readAll(String topic, Duration quiet) {
        return readAll(KafkaBrokerExtension.bootstrapServers(), topic, quiet);
    }

    /** Every record of a topic on the broker at {@code servers}, read until {@code quiet} passes with nothing new. */
    public static List<ConsumerRecord<String, byte[]>> readAll(String servers, String topic, Duration quiet) {
        Properties p = new Properties();
        p.put("bootstrap.servers", servers);
        p.put("group.id", "test-reader-" + UUID.randomUUID());
        p.put("auto.offset.reset", "earliest");
        p.put("key.deserializer", StringDeserializer.class.getName());
        p.put("value.deserializer", ByteArrayDeserializer.class.getName());
        List<ConsumerRecord<String, byte[]>> out = new ArrayList<>();
        try (KafkaConsumer<String, byte[]> c = new KafkaConsumer<>(p)) {
            c.subscribe(List.of(topic));
            long idleUntil = System.nanoTime() + quiet.toNanos() + Duration.ofSeconds(5).toNanos();
            while (System.nanoTime() < idleUntil) {
                var records = c.poll(Duration.ofMillis(200));
                if (!records.isEmpty()) {
                    records.forEach(out::add);
                    idleUntil = System.nanoTime() + quiet.toNanos();
                }
            }
        }
        return out;
    }

    public static String header(ConsumerRecord<?, ?> r, String name) {
        var h = r.headers().lastHeader(name);
        return h == null ? null : new String(h.value(), StandardCharsets.UTF_8);
    }
}
