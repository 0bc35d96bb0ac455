package dev.stopline.service.alert;

import dev.stopline.monitor.AlertKind;
import static org.junit.jupiter.api.Assertions.assertEquals;

import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.time.Instant;
import java.util.List;
import java.util.Map;
import java.util.Properties;
import java.util.UUID;
import java.util.concurrent.TimeUnit;

import org.apache.kafka.clients.consumer.ConsumerConfig;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.consumer.KafkaConsumer;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerConfig;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.serialization.ByteArrayDeserializer;
import org.apache.kafka.common.serialization.ByteArraySerializer;
import org.apache.kafka.common.serialization.StringDeserializer;
import org.apache.kafka.common.serialization.StringSerializer;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;

import dev.stopline.service.broker.EmbeddedKafka;
import dev.stopline.testing.KafkaBrokerExtension;

@ExtendWith(KafkaBrokerExtension.class)
class CloudEventsKafkaTest {

    @Test
    void structuredEvent_roundTripsThroughARealBroker_keyedByExperiment(EmbeddedKafka kafka) throws Exception {
        String topic = "stopline.alerts.test-" + UUID.randomUUID();
        AlertKind k = AlertKind.SAMPLE_RATIO;
        AlertEnvelope a = new AlertEnvelope(AlertEnvelope.stableId("gift-wrap-upsell", k, "look-2"),
                "gift-wrap-upsell", k, Instant.parse("2026-11-30T12:00:00Z"), Map.of("pValue", 1.0e-7));
        CloudEvents events = CloudEvents.forInstance("bookshop-eu-1");

        Properties pp = new Properties();
        pp.put(ProducerConfig.BOOTSTRAP_SERVERS_CONFIG, kafka.bootstrapServers());
        try (KafkaProducer<String, byte[]> p = new KafkaProducer<>(pp, new StringSerializer(),
                new ByteArraySerializer())) {
            p.send(events.toKafkaRecord(topic, a)).get(30, TimeUnit.SECONDS);
        }
        ConsumerRecord<String, byte[]> r = readFirst(kafka, topic);

        assertEquals("gift-wrap-upsell", r.key());
        assertEquals("application/cloudevents+json; charset=UTF-8",
                new String(r.headers().lastHeader("content-type").value(), StandardCharsets.UTF_8));
        JsonNode e = new ObjectMapper().readTree(r.value());
        assertEquals(a.id(), e.get("id").asText());
        assertEquals("dev.stopline.alert.sample-ratio", e.get("type").asText());
        assertEquals(1.0e-7, e.get("data").get("pValue").asDouble(), 0.0); // exact JSON round trip
    }

    private static ConsumerRecord<String, byte[]> readFirst(EmbeddedKafka k, String topic) {
        Properties p = new Properties();
        p.put(ConsumerConfig.BOOTSTRAP_SERVERS_CONFIG, k.bootstrapServers());
        try (KafkaConsumer<String, byte[]> c = new KafkaConsumer<>(p, new StringDeserializer(),
                new ByteArrayDeserializer())) {
            TopicPartition tp = new TopicPartition(topic, 0);
            c.assign(List.of(tp));
            c.seekToBeginning(List.of(tp));
            long deadline = System.nanoTime() + KafkaBrokerExtension.RECORD_WAIT.toNanos();
            while (System.nanoTime() < deadline) {
                for (ConsumerRecord<String, byte[]> r : c.poll(Duration.ofMillis(200))) {
                    return r;
                }
            }
        }
        throw new AssertionError("no record on " + topic + " within " + KafkaBrokerExtension.RECORD_WAIT);
    }
}
