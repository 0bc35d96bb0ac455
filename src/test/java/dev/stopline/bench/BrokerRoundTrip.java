package dev.stopline.bench;

import static dev.stopline.bench.BenchSupport.millis;
import static dev.stopline.bench.BenchSupport.percentile;

import dev.stopline.service.broker.EmbeddedKafka;
import dev.stopline.testing.FreePorts;
import dev.stopline.testing.KafkaBrokerExtension;
import java.lang.management.ManagementFactory;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import java.util.Properties;
import javax.management.MBeanServer;
import javax.management.ObjectName;
import org.apache.kafka.clients.consumer.ConsumerRecords;
import org.apache.kafka.clients.consumer.KafkaConsumer;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.serialization.StringDeserializer;
import org.apache.kafka.common.serialization.StringSerializer;

/**
 * The floor under the daemon's produce-to-alert latency on this machine: the same embedded broker, no
 * daemon. One record at a time (acks=all, linger 0), a pause of {@code rt.gapMs} between records
 * (0, 10 and 20 ms by default: busy, and idle between alerts as in {@link IngestBenchmark}'s latency
 * runs); prints the producer's wait for the acknowledgement, the time until a plain consumer has the
 * record, and the broker's own split of the produce request (its {@code RequestMetrics}). An alert
 * crosses the broker twice (the snapshot in, the CloudEvent out), so twice the round trip printed here is
 * the part of the latency the daemon cannot change. {@code rt.records} (500) per gap, after
 * {@code rt.warmup} (2,000) unreported ones.
 */
public final class BrokerRoundTrip {
    private BrokerRoundTrip() {
    }

    public static void main(String[] args) throws Exception {
        int records = Integer.getInteger("rt.records", 500);
        List<Integer> gaps = Arrays.stream(System.getProperty("rt.gapMs", "0,10,20").split(","))
                .map(String::trim).map(Integer::valueOf).toList();
        Path dir = Files.createTempDirectory("stopline-roundtrip");
        int[] ports = FreePorts.pickTwo();
        try (EmbeddedKafka broker = EmbeddedKafka.builder().port(ports[0]).controllerPort(ports[1]).dataDir(dir)
                .build().start()) {
            String servers = broker.bootstrapServers();
            System.out.println("== broker round trip on loopback (embedded broker, acks=all, linger 0) ==");
            run(servers, "roundtrip-warmup", Integer.getInteger("rt.warmup", 2000), 0); // JIT of broker and clients
            for (int gap : gaps) {
                System.out.println(run(servers, "roundtrip-" + gap, records, gap));
            }
            System.out.println(brokerSplit());
        } finally {
            KafkaBrokerExtension.deleteTree(dir);
        }
        System.exit(0);
    }

    private static String run(String servers, String topic, int n, int gapMs) throws Exception {
        Properties p = new Properties();
        p.put("bootstrap.servers", servers);
        p.put("acks", "all");
        p.put("linger.ms", "0");
        p.put("key.serializer", StringSerializer.class.getName());
        p.put("value.serializer", StringSerializer.class.getName());
        Properties c = new Properties();
        c.put("bootstrap.servers", servers);
        c.put("enable.auto.commit", "false");
        c.put("key.deserializer", StringDeserializer.class.getName());
        c.put("value.deserializer", StringDeserializer.class.getName());
        long[] ack = new long[n];
        long[] consumed = new long[n];
        try (KafkaProducer<String, String> producer = new KafkaProducer<>(p);
             KafkaConsumer<String, String> consumer = new KafkaConsumer<>(c)) {
            producer.send(new ProducerRecord<>(topic, "k", "first")).get(); // creates the topic
            TopicPartition tp = new TopicPartition(topic, 0);
            consumer.assign(List.of(tp));
            consumer.seekToEnd(List.of(tp));
            consumer.position(tp);
            for (int i = 0; i < n; i++) {
                long t0 = System.nanoTime();
                producer.send(new ProducerRecord<>(topic, "k", "record " + i)).get();
                ack[i] = System.nanoTime() - t0;
                long deadline = t0 + Duration.ofSeconds(30).toNanos();
                ConsumerRecords<String, String> got;
                do {
                    got = consumer.poll(Duration.ofMillis(100));
                } while (got.isEmpty() && System.nanoTime() < deadline);
                consumed[i] = System.nanoTime() - t0;
                if (gapMs > 0) {
                    Thread.sleep(gapMs);
                }
            }
        }
        Arrays.sort(ack);
        Arrays.sort(consumed);
        return String.format(Locale.ROOT, "  %d records, %2d ms apart: acknowledged p50 %.1f / p99 %.1f ms; "
                        + "consumed p50 %.1f / p99 %.1f ms", n, gapMs, millis(percentile(ack, 0.5)),
                millis(percentile(ack, 0.99)), millis(percentile(consumed, 0.5)), millis(percentile(consumed, 0.99)));
    }

    /** The broker's split of all produce requests of the run (ms, its own histograms). */
    private static String brokerSplit() throws Exception {
        MBeanServer mbs = ManagementFactory.getPlatformMBeanServer();
        StringBuilder out = new StringBuilder("  broker, produce requests of all runs (mean / p99 ms):");
        for (String part : List.of("RequestQueueTimeMs", "LocalTimeMs", "ResponseQueueTimeMs", "ResponseSendTimeMs",
                "TotalTimeMs")) {
            ObjectName name = new ObjectName("kafka.network:type=RequestMetrics,name=" + part + ",request=Produce");
            out.append(String.format(Locale.ROOT, " %s %.2f / %.2f;", part.replace("TimeMs", ""),
                    (Double) mbs.getAttribute(name, "Mean"), (Double) mbs.getAttribute(name, "99thPercentile")));
        }
        return out.toString();
    }
}
