package dev.stopline.bench;

import dev.stopline.testing.DaemonProcess;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.List;
import java.util.Map;
import java.util.Properties;
import java.util.TreeMap;
import java.util.concurrent.BlockingQueue;
import java.util.concurrent.LinkedBlockingQueue;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.admin.AdminClientConfig;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.consumer.KafkaConsumer;
import org.apache.kafka.clients.consumer.OffsetAndMetadata;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.serialization.ByteArrayDeserializer;
import org.apache.kafka.common.serialization.StringDeserializer;
import org.apache.kafka.common.serialization.StringSerializer;

/**
 * Small helpers the benchmark mains share: one scrape of the daemon's Prometheus metrics, {@code jcmd},
 * Kafka clients and offsets, an alert-topic reader, percentiles and the machine's load average. Every
 * wait takes a deadline.
 */
final class BenchSupport {
    private static final Pattern LAST_SEQUENCE = Pattern.compile("\"lastSequence\"\\s*:\\s*(\\d+)");

    private BenchSupport() {
    }

    // ------------------------------------------------------------------ metrics

    /**
     * One scrape of {@code /q/metrics}. With thousands of live experiments the page has a few lines per
     * experiment (information fraction, z), so a caller that needs several figures scrapes once.
     */
    record Scrape(String text) {
        static Scrape of(DaemonProcess daemon) {
            return new Scrape(daemon.getBody("/q/metrics"));
        }

        /** Sum of every sample of metric {@code name} whose labels contain {@code labelFilter} ("" for all). */
        double sum(String name, String labelFilter) {
            double sum = 0;
            for (String line : text.split("\n")) {
                if ((line.startsWith(name + "{") || line.startsWith(name + " ")) && line.contains(labelFilter)) {
                    sum += value(line);
                }
            }
            return sum;
        }

        /** Samples of metric {@code name} by the value of one label. */
        Map<String, Double> byLabel(String name, String label) {
            Map<String, Double> out = new TreeMap<>();
            String key = label + "=\"";
            for (String line : text.split("\n")) {
                int a = line.indexOf(key);
                if (line.startsWith(name + "{") && a > 0) {
                    a += key.length();
                    out.merge(line.substring(a, line.indexOf('"', a)), value(line), Double::sum);
                }
            }
            return out;
        }

        /** {@code stopline_snapshots_total} by outcome (evaluated, duplicate, redelivered). */
        Map<String, Double> snapshotOutcomes() {
            return byLabel("stopline_snapshots_total", "outcome");
        }

        double deadLetters() {
            return sum("stopline_dead_letters_total", "");
        }

        double alertsRaised() {
            return sum("stopline_alerts_total", "");
        }

        /** Every snapshot the daemon has finished with: all outcomes plus dead letters. */
        long processed() {
            return Math.round(sum("stopline_snapshots_total", "") + deadLetters());
        }

        /** The sum of {@code jvm_memory_used_bytes{area="heap"}} over the heap pools. */
        double heapUsedBytes() {
            return sum("jvm_memory_used_bytes", "area=\"heap\"");
        }

        /**
         * {@code jvm_gc_live_data_size_bytes}: the old generation right after the last major collection.
         * After {@code jcmd GC.run} (a full collection) it is the live heap, untouched by what the daemon
         * allocates between the collection and the scrape, which {@link #heapUsedBytes} counts.
         */
        double liveAfterGcBytes() {
            return sum("jvm_gc_live_data_size_bytes", "");
        }

        private static double value(String metricLine) {
            return Double.parseDouble(metricLine.substring(metricLine.lastIndexOf(' ') + 1));
        }
    }

    /** Used heap after a full collection: {@code jcmd <pid> GC.run}, then one scrape. */
    static double heapAfterGcMiB(DaemonProcess daemon) {
        jcmd(daemon.pid(), "GC.run");
        return Scrape.of(daemon).heapUsedBytes() / (1024.0 * 1024.0);
    }

    static String jcmd(long pid, String command) {
        Path jcmd = Path.of(System.getProperty("java.home"), "bin", "jcmd");
        try {
            Process p = new ProcessBuilder(jcmd.toString(), Long.toString(pid), command).redirectErrorStream(true)
                    .start();
            String out = new String(p.getInputStream().readAllBytes(), StandardCharsets.UTF_8);
            if (!p.waitFor(60, TimeUnit.SECONDS) || p.exitValue() != 0) {
                throw new IllegalStateException("jcmd " + command + " failed: " + out);
            }
            return out;
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            throw new IllegalStateException(e);
        }
    }

    // ------------------------------------------------------------------ waiting for the daemon

    /** Polls the metrics until the daemon has finished with {@code target} snapshots. */
    static void awaitProcessed(DaemonProcess daemon, long target, Duration max, long pollMillis)
            throws InterruptedException {
        long deadline = System.nanoTime() + max.toNanos();
        long seen;
        while ((seen = Scrape.of(daemon).processed()) < target) {
            if (System.nanoTime() > deadline) {
                throw new IllegalStateException("daemon processed " + seen + " of " + target + " within " + max);
            }
            Thread.sleep(pollMillis);
        }
    }

    /**
     * Polls {@code /api/experiments/<id>} until the experiment's last evaluated sequence reaches
     * {@code sequence}. On one partition records are handled in order, so the last record produced being
     * evaluated means every record before it is done; asking for one experiment costs the daemon far
     * less than a metrics scrape.
     */
    static void awaitSequence(DaemonProcess daemon, String experiment, long sequence, Duration max, long pollMillis)
            throws InterruptedException {
        long deadline = System.nanoTime() + max.toNanos();
        while (true) {
            Matcher m = LAST_SEQUENCE.matcher(daemon.getBody("/api/experiments/" + experiment));
            if (m.find() && Long.parseLong(m.group(1)) >= sequence) {
                return;
            }
            if (System.nanoTime() > deadline) {
                throw new IllegalStateException(experiment + " did not reach sequence " + sequence + " within " + max);
            }
            Thread.sleep(pollMillis);
        }
    }

    // ------------------------------------------------------------------ Kafka

    /**
     * A string consumer of partition 0 of {@code topic}, positioned at its current end, without a group
     * (nothing committed) and with short fetch waits: a reader that timestamps arrivals.
     */
    static KafkaConsumer<String, String> atEnd(String servers, String topic) {
        Properties p = new Properties();
        p.put("bootstrap.servers", servers);
        p.put("key.deserializer", StringDeserializer.class.getName());
        p.put("value.deserializer", StringDeserializer.class.getName());
        p.put("enable.auto.commit", "false");
        p.put("fetch.max.wait.ms", "100");
        KafkaConsumer<String, String> c = new KafkaConsumer<>(p);
        TopicPartition tp = new TopicPartition(topic, 0);
        c.assign(List.of(tp));
        c.seekToEnd(List.of(tp));
        c.position(tp, Duration.ofSeconds(30));
        return c;
    }

    static KafkaProducer<String, String> producer(String servers, int lingerMs) {
        Properties p = new Properties();
        p.put("bootstrap.servers", servers);
        p.put("key.serializer", StringSerializer.class.getName());
        p.put("value.serializer", StringSerializer.class.getName());
        p.put("acks", "all");
        p.put("linger.ms", Integer.toString(lingerMs));
        p.put("batch.size", Integer.toString(256 * 1024));
        return new KafkaProducer<>(p);
    }

    /** The end offset of partition 0 of {@code topic}. */
    static long endOffset(String servers, String topic) {
        Properties p = new Properties();
        p.put("bootstrap.servers", servers);
        p.put("key.deserializer", ByteArrayDeserializer.class.getName());
        p.put("value.deserializer", ByteArrayDeserializer.class.getName());
        TopicPartition tp = new TopicPartition(topic, 0);
        try (KafkaConsumer<byte[], byte[]> c = new KafkaConsumer<>(p)) {
            return c.endOffsets(List.of(tp), Duration.ofSeconds(30)).get(tp);
        }
    }

    /** The offset a consumer group has committed on partition 0 of {@code topic}, or 0 when none. */
    static long committedOffset(String servers, String group, String topic) {
        Properties p = new Properties();
        p.put(AdminClientConfig.BOOTSTRAP_SERVERS_CONFIG, servers);
        TopicPartition tp = new TopicPartition(topic, 0);
        try (Admin admin = Admin.create(p)) {
            Map<TopicPartition, OffsetAndMetadata> offsets = admin.listConsumerGroupOffsets(group)
                    .partitionsToOffsetAndMetadata().get(30, TimeUnit.SECONDS);
            OffsetAndMetadata o = offsets.get(tp);
            return o == null ? 0 : o.offset();
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            throw new IllegalStateException(e);
        } catch (Exception e) {
            throw new IllegalStateException("cannot read the offsets of group " + group + ": " + e, e);
        }
    }

    /** One record read from the alert topic, with the reader's {@code System.nanoTime()} at its arrival. */
    record Arrival(String key, String value, long nanos) {
    }

    /**
     * Reads partition 0 of a topic from its end at start, queueing every record with its arrival time,
     * until closed. The position is taken before {@link #start} returns, so nothing produced after it is
     * missed.
     */
    static final class TopicReader implements AutoCloseable {
        private final BlockingQueue<Arrival> arrivals = new LinkedBlockingQueue<>();
        private final AtomicBoolean stop = new AtomicBoolean();
        private final Thread thread;

        private TopicReader(Thread thread) {
            this.thread = thread;
        }

        static TopicReader start(String servers, String topic) {
            KafkaConsumer<String, String> c = atEnd(servers, topic);
            TopicReader[] self = new TopicReader[1];
            Thread t = new Thread(() -> {
                try (c) {
                    while (!self[0].stop.get()) {
                        var records = c.poll(Duration.ofMillis(50));
                        long now = System.nanoTime();
                        for (ConsumerRecord<String, String> r : records) {
                            self[0].arrivals.add(new Arrival(r.key(), r.value(), now));
                        }
                    }
                }
            }, "bench-" + topic + "-reader");
            t.setDaemon(true);
            self[0] = new TopicReader(t);
            t.start();
            return self[0];
        }

        /** Everything that arrived since the last call. */
        List<Arrival> drain() {
            List<Arrival> out = new java.util.ArrayList<>();
            arrivals.drainTo(out);
            return out;
        }

        @Override
        public void close() throws InterruptedException {
            stop.set(true);
            thread.join(5000);
        }
    }

    // ------------------------------------------------------------------ figures and plumbing

    /**
     * Least-squares slope of y on x, {@code sum((x - mean x)(y - mean y)) / sum((x - mean x)^2)}; NaN with
     * fewer than two points or when every x is the same.
     */
    static double slope(double[] x, double[] y) {
        if (x.length != y.length) {
            throw new IllegalArgumentException(x.length + " x values but " + y.length + " y values");
        }
        if (x.length < 2) {
            return Double.NaN;
        }
        double mx = 0;
        double my = 0;
        for (int i = 0; i < x.length; i++) {
            mx += x[i] / x.length;
            my += y[i] / y.length;
        }
        double sxy = 0;
        double sxx = 0;
        for (int i = 0; i < x.length; i++) {
            sxy += (x[i] - mx) * (y[i] - my);
            sxx += (x[i] - mx) * (x[i] - mx);
        }
        return sxx > 0 ? sxy / sxx : Double.NaN;
    }

    /** Nearest-rank percentile of sorted values. */
    static long percentile(long[] sorted, double q) {
        int rank = (int) Math.ceil(q * sorted.length);
        return sorted[Math.max(0, Math.min(sorted.length - 1, rank - 1))];
    }

    static double seconds(long nanos) {
        return nanos / 1e9;
    }

    static double millis(long nanos) {
        return nanos / 1e6;
    }

    /** The first three fields of {@code /proc/loadavg} (1, 5 and 15 minutes). */
    static String loadAverage() {
        try {
            String[] f = Files.readString(Path.of("/proc/loadavg")).strip().split(" ");
            return f[0] + " / " + f[1] + " / " + f[2];
        } catch (IOException | RuntimeException e) {
            return "unknown";
        }
    }

    static String tail(Path log, int lines) {
        try {
            List<String> all = Files.readAllLines(log);
            return String.join("\n", all.subList(Math.max(0, all.size() - lines), all.size()));
        } catch (IOException e) {
            return "(no log: " + e.getMessage() + ")";
        }
    }
}
