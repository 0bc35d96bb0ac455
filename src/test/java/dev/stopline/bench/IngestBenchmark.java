package dev.stopline.bench;

import static dev.stopline.bench.BenchSupport.endOffset;
import static dev.stopline.bench.BenchSupport.jcmd;
import static dev.stopline.bench.BenchSupport.millis;
import static dev.stopline.bench.BenchSupport.percentile;
import static dev.stopline.bench.BenchSupport.producer;
import static dev.stopline.bench.BenchSupport.seconds;
import static dev.stopline.bench.BenchSupport.tail;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.stopline.service.broker.EmbeddedKafka;
import dev.stopline.testing.Counts;
import dev.stopline.testing.DaemonProcess;
import dev.stopline.testing.FreePorts;
import dev.stopline.testing.KafkaBrokerExtension;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Properties;
import java.util.SplittableRandom;
import java.util.concurrent.BlockingQueue;
import java.util.concurrent.LinkedBlockingQueue;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.locks.LockSupport;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.consumer.ConsumerRecords;
import org.apache.kafka.clients.consumer.KafkaConsumer;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.serialization.ByteArrayDeserializer;
import org.apache.kafka.common.serialization.StringDeserializer;

/**
 * Ingest benchmark of the packaged daemon on loopback: a real embedded broker in this JVM, the daemon
 * ({@code quarkus-run.jar serve}) as a separate process on an H2 file database. Three figures:
 *
 * <ol>
 *   <li><b>Throughput</b>: snapshots per second end to end (ingest, evaluate, persist; the offset is
 *       committed after the transaction) on a backlog: every snapshot is in the topic before the daemon
 *       starts, so the producer cannot be what is measured. The daemon's rate is taken between the
 *       moments {@code stopline_snapshots_total} passes the warm-up count and reaches the total (scraped
 *       every 20 ms); then a bare {@code KafkaConsumer} (same deserializers, no processing) reads the
 *       same offsets after reading the warm-up ones. The ratio daemon / bare consumer is the figure
 *       (target at least 0.5). The warm-up is long (10,000 rounds of 100 experiments) because the
 *       daemon's JIT compiler was still busy for most of a shorter one: in a flight recording of a run
 *       with 1,000 warm-up rounds it compiled for 0.5 to 1 s of every second of the timed part (the H2
 *       store's methods and the commit, recompiled after the first looks), which is start-up, not the
 *       steady state a production daemon runs in.</li>
 *   <li><b>Produce-to-alert latency</b>: one snapshot at a time, each of a fresh experiment with a
 *       60/40 split against a 50/50 allocation (a sample-ratio mismatch at the first snapshot), timed from
 *       just before {@code send} to the CloudEvent's arrival on the alert topic in this JVM (one clock).
 *       p50, p99 and max after a warm-up (target p99 below 50 ms). Twice: with the daemon and the broker
 *       idle between alerts, and under a steady feed of ordinary snapshots of other experiments
 *       ({@code bench.traffic} per second, 2,000 by default; 0 skips this run), which is how a production
 *       daemon lives.</li>
 *   <li><b>Heap</b>: a second daemon with {@code bench.heapExperiments} plans (10,000) in its plans
 *       directory, each fed {@code bench.heapSnapshots} snapshots; then {@code jcmd GC.run} and the used
 *       heap from {@code jvm_memory_used_bytes{area="heap"}} (target below 512 MiB).</li>
 * </ol>
 *
 * <p>Bounded: every wait has a deadline, the daemons are stopped and the temporary directory deleted at
 * the end. Settings are system properties ({@code -Dbench.experiments=100} ...; see {@link Settings});
 * {@code -Dbench.jfr=/tmp/ingest.jfr} makes the first daemon write a flight recording;
 * {@code -Dbench.daemonOptions="-Dstopline.ingest.lanes=1"} passes options to the first daemon's JVM. Not part of the test
 * run (it has a {@code main}, no {@code @Test}). Run it as DEVELOPERS.md says under "Benchmarks".
 */
public final class IngestBenchmark {
    private static final String COUNTS = "stopline.counts";
    private static final String ALERTS = "stopline.alerts";
    /** Experiments whose ordinary snapshots make the steady traffic of the second latency run. */
    private static final int TRAFFIC_EXPERIMENTS = 200;

    private IngestBenchmark() {
    }

    /** What the run does; each from a system property of the same name with the prefix {@code bench.}. */
    record Settings(int experiments, int warmupRounds, int rounds, int alerts, int alertWarmup, int heapExperiments,
                    int heapSnapshots, String xmx, String jfr, List<String> phases, boolean keep, int traffic) {
        static Settings fromSystemProperties() {
            return new Settings(Integer.getInteger("bench.experiments", 100),
                    Integer.getInteger("bench.warmupRounds", 10_000),
                    Integer.getInteger("bench.rounds", 3000),
                    Integer.getInteger("bench.alerts", 200),
                    Integer.getInteger("bench.alertWarmup", 20),
                    Integer.getInteger("bench.heapExperiments", 10_000),
                    Integer.getInteger("bench.heapSnapshots", 3),
                    System.getProperty("bench.xmx", "1g"),
                    System.getProperty("bench.jfr", ""),
                    List.of(System.getProperty("bench.phases", "throughput,latency,heap").split(",")),
                    Boolean.getBoolean("bench.keep"),
                    Integer.getInteger("bench.traffic", 2000));
        }
    }

    public static void main(String[] args) throws Exception {
        Settings s = Settings.fromSystemProperties();
        if (System.getProperty("stopline.daemon.ready-seconds") == null) {
            // registering 10,000 plan files took 55 s at load 12 and 173 s at load 17 on 2 cores
            System.setProperty("stopline.daemon.ready-seconds", "600");
        }
        KafkaBrokerExtension.trapExit();
        KafkaBrokerExtension.quietKafkaLogging();
        Path dir = Files.createTempDirectory("stopline-bench-");
        List<String> report = new ArrayList<>();
        report.add("load average at start: " + loadAverage());
        int[] ports = FreePorts.pickTwo();
        try (EmbeddedKafka broker = EmbeddedKafka.builder().port(ports[0]).controllerPort(ports[1])
                .dataDir(dir.resolve("kafka")).topic(COUNTS, 1).topic(ALERTS, 1).topic("stopline.counts.dlq", 1)
                .topic("heap.counts", 1).topic("heap.alerts", 1).topic("heap.dlq", 1).build().start()) {
            if (s.phases().contains("throughput") || s.phases().contains("latency")) {
                runFirstDaemon(s, broker.bootstrapServers(), dir, report);
            }
            if (s.phases().contains("heap")) {
                runHeapDaemon(s, broker.bootstrapServers(), dir, report);
            }
        } finally {
            report.add("load average at end: " + loadAverage());
            System.out.println();
            System.out.println("== Stopline ingest benchmark ==");
            report.forEach(System.out::println);
            if (s.keep()) {
                System.out.println("kept " + dir);
            } else {
                KafkaBrokerExtension.deleteTree(dir);
            }
        }
        System.exit(0); // the broker's and clients' non-daemon threads are gone, but be sure
    }

    // ------------------------------------------------------------------ throughput and latency

    private static void runFirstDaemon(Settings s, String servers, Path dir, List<String> report) throws Exception {
        Path plans = Files.createDirectories(dir.resolve("plans"));
        int perExperiment = s.warmupRounds() + s.rounds();
        for (int i = 0; i < s.experiments(); i++) {
            Files.writeString(plans.resolve(tpId(i) + ".yaml"), plan(tpId(i), 100L * perExperiment));
        }
        for (int i = 0; i < 2 * (s.alertWarmup() + s.alerts()); i++) { // an idle run and one under traffic
            Files.writeString(plans.resolve(latId(i) + ".yaml"), plan(latId(i), 1_000_000));
        }
        for (int i = 0; i < TRAFFIC_EXPERIMENTS; i++) {
            Files.writeString(plans.resolve(trafficId(i) + ".yaml"), plan(trafficId(i), 1_000_000_000L));
        }
        Backlog backlog = null;
        if (s.phases().contains("throughput")) {
            try (KafkaProducer<String, String> producer = producer(servers, 5)) {
                backlog = produceBacklog(s, servers, producer, report);
            }
        }
        List<String> jvm = new ArrayList<>(List.of("-Xmx" + s.xmx()));
        if (!s.jfr().isBlank()) {
            jvm.add("-XX:StartFlightRecording=filename=" + s.jfr() + ",settings=profile");
        }
        for (String option : System.getProperty("bench.daemonOptions", "").split(" ")) {
            if (!option.isBlank()) {
                jvm.add(option);                      // e.g. -Dstopline.ingest.lanes=1 for a before/after
            }
        }
        String jdbc = "jdbc:h2:file:" + dir.resolve("db").resolve("stopline").toAbsolutePath();
        Path log = dir.resolve("daemon.log");
        long t0 = System.nanoTime();
        try (DaemonProcess daemon = DaemonProcess.serve(jvm, List.of("--bootstrap-servers", servers, "--jdbc-url", jdbc,
                "--plans-dir", plans.toString()), log)) {
            report.add(String.format(Locale.ROOT, "daemon 1: %d + %d plans, ready in %.1f s (-Xmx%s)",
                    s.experiments(), 2 * (s.alertWarmup() + s.alerts()) + TRAFFIC_EXPERIMENTS,
                    seconds(System.nanoTime() - t0), s.xmx()));
            if (backlog != null) {
                throughput(s, servers, daemon, backlog, report);
            }
            if (s.phases().contains("latency")) {
                latency(s, servers, daemon, 0, 0, report);
                if (s.traffic() > 0) {
                    latency(s, servers, daemon, s.alertWarmup() + s.alerts(), s.traffic(), report);
                }
            }
            daemon.terminate(Duration.ofSeconds(30));
        } catch (RuntimeException e) {
            System.err.println("daemon log tail:\n" + tail(log, 40));
            throw e;
        }
    }

    /** Offsets of the backlog: [start, warm) warms the reader up, [warm, end) is timed. */
    private record Backlog(long start, long warm, long end) {
    }

    private static Backlog produceBacklog(Settings s, String servers, KafkaProducer<String, String> producer,
                                          List<String> report) {
        SplittableRandom random = new SplittableRandom(20270301L);
        long[][] cumulative = new long[s.experiments()][4];
        List<ProducerRecord<String, String>> records = buildRounds(s.experiments(), 1, s.warmupRounds() + s.rounds(),
                cumulative, random);
        long start = endOffset(servers, COUNTS);
        long t0 = System.nanoTime();
        sendAll(producer, records);
        long produced = System.nanoTime() - t0;
        report.add(String.format(Locale.ROOT, "backlog: %d experiments x (%d warm-up + %d timed) rounds = %d snapshots,"
                        + " produced before the daemon starts in %.2f s", s.experiments(), s.warmupRounds(), s.rounds(),
                records.size(), seconds(produced)));
        long warm = start + (long) s.experiments() * s.warmupRounds();
        return new Backlog(start, warm, endOffset(servers, COUNTS));
    }

    private static void throughput(Settings s, String servers, DaemonProcess daemon, Backlog backlog,
                                   List<String> report) throws Exception {
        long warmCount = backlog.warm() - backlog.start();
        long total = backlog.end() - backlog.start();
        long first = processed(daemon);
        if (first >= warmCount) {
            throw new IllegalStateException("the daemon had processed " + first + " snapshots when it became ready, "
                    + "past the warm-up of " + warmCount + ": raise -Dbench.warmupRounds");
        }
        // One partition, handled in order: the last experiment reaching a round means every record before
        // it is done. Asking for one experiment every 50 ms costs the daemon far less than a metrics scrape.
        String last = tpId(s.experiments() - 1);
        long tWarm = awaitSequence(daemon, last, s.warmupRounds(), Duration.ofSeconds(600));
        long cpuWarm = processCpuNanos(daemon.pid());
        long tEnd = awaitSequence(daemon, last, s.warmupRounds() + s.rounds(), Duration.ofSeconds(1200));
        long cpuEnd = processCpuNanos(daemon.pid());
        awaitProcessed(daemon, total, Duration.ofSeconds(60), 200);
        long m = total - warmCount;
        double daemonRate = m / seconds(tEnd - tWarm);
        Map<String, Double> outcomes = snapshotOutcomes(daemon);
        long[] bare = bareConsumer(servers, backlog.start(), backlog.warm(), backlog.end());
        double bareRate = m / seconds(bare[0]);
        report.add(String.format(Locale.ROOT, "  daemon end to end, timed part: %d snapshots in %.2f s = %.0f "
                + "snapshots/s; outcomes %s, dead letters %s", m, seconds(tEnd - tWarm), daemonRate, outcomes,
                deadLettersByReason(daemon)));
        report.add(String.format(Locale.ROOT, "  daemon CPU (all threads, /proc) per snapshot: %.1f us", 
                (cpuEnd - cpuWarm) / 1e3 / m));
        report.add(String.format(Locale.ROOT, "  bare KafkaConsumer, same %d records: %.0f records/s, CPU of its "
                + "thread per record %.1f us", m, bareRate, bare[1] / 1e3 / m));
        report.add(String.format(Locale.ROOT, "  ratio daemon / bare consumer: %.3f (target >= 0.5: %s)",
                daemonRate / bareRate, daemonRate / bareRate >= 0.5 ? "met" : "missed"));
    }

    /**
     * The records of rounds {@code first..first+n-1}, built before any is sent so that formatting them is
     * not part of the timed window (the daemon must not be measured against a slow producer).
     */
    private static List<ProducerRecord<String, String>> buildRounds(int experiments, int first, int n,
                                                                    long[][] cumulative, SplittableRandom random) {
        List<ProducerRecord<String, String>> records = new ArrayList<>(experiments * n);
        for (int k = first; k < first + n; k++) {
            for (int i = 0; i < experiments; i++) {
                records.add(new ProducerRecord<>(COUNTS, tpId(i), nextSnapshot(tpId(i), k, cumulative[i], random)));
            }
        }
        return records;
    }

    /**
     * The next snapshot of an experiment at a 50/50 split: about 100 more units per arm and 0 to 20 more
     * orders each (about 10 %), added to {@code c} (control units, orders, treatment units, orders).
     */
    private static String nextSnapshot(String id, long sequence, long[] c, SplittableRandom random) {
        c[0] += 95 + random.nextInt(11);
        c[1] += random.nextInt(21);
        c[2] += 95 + random.nextInt(11);
        c[3] += random.nextInt(21);
        return Counts.proportion(id, sequence, "orders", c[0], c[1], c[2], c[3]);
    }

    private static void sendAll(KafkaProducer<String, String> producer, List<ProducerRecord<String, String>> records) {
        for (ProducerRecord<String, String> r : records) {
            producer.send(r);
        }
        producer.flush();
    }

    /**
     * A plain consumer over offsets [start, end) after reading [warm, start) once: returns the wall
     * nanoseconds and the CPU nanoseconds of the reading thread for the timed part.
     */
    private static long[] bareConsumer(String servers, long warm, long start, long end) {
        Properties p = new Properties();
        p.put("bootstrap.servers", servers);
        p.put("key.deserializer", StringDeserializer.class.getName());
        p.put("value.deserializer", ByteArrayDeserializer.class.getName());
        p.put("enable.auto.commit", "false");
        TopicPartition tp = new TopicPartition(COUNTS, 0);
        java.lang.management.ThreadMXBean threads = java.lang.management.ManagementFactory.getThreadMXBean();
        try (KafkaConsumer<String, byte[]> c = new KafkaConsumer<>(p)) {
            c.assign(List.of(tp));
            c.seek(tp, warm);
            readUntil(c, start);
            c.seek(tp, start);
            long cpu0 = threads.getCurrentThreadCpuTime();
            long t0 = System.nanoTime();
            long bytes = readUntil(c, end);
            long elapsed = System.nanoTime() - t0;
            long cpu = threads.getCurrentThreadCpuTime() - cpu0;
            if (bytes <= 0) {
                throw new IllegalStateException("bare consumer read nothing");
            }
            return new long[] {elapsed, cpu};
        }
    }

    /** User + system CPU time of a process so far, from {@code /proc/<pid>/stat} (Linux; clock ticks of 10 ms). */
    private static long processCpuNanos(long pid) {
        try {
            String stat = Files.readString(Path.of("/proc", Long.toString(pid), "stat"));
            String[] f = stat.substring(stat.lastIndexOf(')') + 2).split(" ");
            long ticks = Long.parseLong(f[11]) + Long.parseLong(f[12]); // fields 14 and 15 of proc(5)
            return ticks * 10_000_000L;
        } catch (IOException e) {
            return 0;
        }
    }

    /** Polls until the position reaches {@code end}; returns the value bytes read (so nothing is optimised away). */
    private static long readUntil(KafkaConsumer<String, byte[]> c, long end) {
        long bytes = 0;
        long deadline = System.nanoTime() + Duration.ofSeconds(120).toNanos();
        TopicPartition tp = c.assignment().iterator().next();
        while (c.position(tp) < end) {
            if (System.nanoTime() > deadline) {
                throw new IllegalStateException("bare consumer did not reach offset " + end);
            }
            for (ConsumerRecord<String, byte[]> r : c.poll(Duration.ofMillis(100))) {
                bytes += r.value().length + (r.key() == null ? 0 : 1);
            }
        }
        return bytes;
    }

    /**
     * Produce-to-alert latency of {@code bench.alerts} alerts sent one at a time, experiments
     * {@code latId(first)} onwards. With {@code traffic} > 0 a second producer feeds ordinary snapshots
     * (no look due, no alert) of {@value #TRAFFIC_EXPERIMENTS} other experiments at that many per second
     * meanwhile, as a production daemon always has; with 0 the daemon, the broker and the machine are idle
     * between alerts.
     */
    private static void latency(Settings s, String servers, DaemonProcess daemon, int first, int traffic,
                                List<String> report) throws Exception {
        BlockingQueue<Arrival> arrivals = new LinkedBlockingQueue<>();
        AtomicBoolean stop = new AtomicBoolean();
        Thread reader = alertReader(servers, arrivals, stop);
        reader.start();
        Thread feeder = traffic > 0 ? trafficFeeder(servers, traffic, stop) : null;
        long[] latencies = new long[s.alerts()];
        long[] sentAt = new long[s.alerts()];
        long[] arrivedAt = new long[s.alerts()];
        try (KafkaProducer<String, String> producer = producer(servers, 0)) {
            if (feeder != null) {
                feeder.start();
            }
            Thread.sleep(feeder == null ? 1000 : 5000); // the reader is at the end of the alert topic; traffic flows
            for (int i = 0; i < s.alertWarmup() + s.alerts(); i++) {
                String id = latId(first + i);
                String snapshot = Counts.proportion(id, 1, "orders", 6000, 600, 4000, 400);
                long sentMillis = System.currentTimeMillis();
                long sent = System.nanoTime();
                producer.send(new ProducerRecord<>(COUNTS, id, snapshot));
                long arrived = awaitAlert(arrivals, id, Duration.ofSeconds(30));
                if (i >= s.alertWarmup()) {
                    latencies[i - s.alertWarmup()] = arrived - sent;
                    sentAt[i - s.alertWarmup()] = sentMillis;
                    arrivedAt[i - s.alertWarmup()] = sentMillis + (arrived - sent) / 1_000_000;
                }
            }
        } finally {
            stop.set(true);
            reader.join(5000);
            if (feeder != null) {
                feeder.join(5000);
            }
        }
        String mode = traffic > 0 ? String.format(Locale.ROOT, "under steady traffic of %d snapshots/s", traffic)
                : "idle between alerts";
        report.add(String.format(Locale.ROOT, "produce-to-alert latency, %s:", mode));
        report.add(breakdown(s, first, daemon, sentAt, arrivedAt));
        Arrays.sort(latencies);
        double p50 = millis(percentile(latencies, 0.50));
        double p99 = millis(percentile(latencies, 0.99));
        report.add(String.format(Locale.ROOT, "  %d sample-ratio alerts (after %d warm-up), one at a time: p50 %.1f ms,"
                        + " p99 %.1f ms, max %.1f ms (target p99 < 50 ms: %s)",
                s.alerts(), s.alertWarmup(), p50, p99, millis(latencies[latencies.length - 1]),
                p99 < 50 ? "met" : "missed"));
    }

    /**
     * Sends ordinary snapshots of the traffic experiments at {@code perSecond}, in slices every 10 ms,
     * until {@code stop}; each experiment's counts grow by about 100 units per arm and snapshot at a 50/50
     * split, far from any look.
     */
    private static Thread trafficFeeder(String servers, int perSecond, AtomicBoolean stop) {
        Thread t = new Thread(() -> {
            SplittableRandom random = new SplittableRandom(20270302L);
            long[][] cumulative = new long[TRAFFIC_EXPERIMENTS][4];
            int[] sequence = new int[TRAFFIC_EXPERIMENTS];
            long sent = 0;
            long t0 = System.nanoTime();
            try (KafkaProducer<String, String> producer = producer(servers, 0)) {
                while (!stop.get()) {
                    long due = (System.nanoTime() - t0) * perSecond / 1_000_000_000L;
                    for (; sent < due; sent++) {
                        int i = (int) (sent % TRAFFIC_EXPERIMENTS);
                        producer.send(new ProducerRecord<>(COUNTS, trafficId(i),
                                nextSnapshot(trafficId(i), ++sequence[i], cumulative[i], random)));
                    }
                    LockSupport.parkNanos(10_000_000L);
                }
            }
        }, "bench-traffic");
        t.setDaemon(true);
        return t;
    }

    /**
     * Where the time goes, from the daemon's own wall-clock stamps (millisecond resolution, same machine
     * clock): sent -> alert row committed ({@code createdAt}: consume, evaluate, transaction), committed ->
     * Kafka channel delivered ({@code deliveredAt}: dispatcher wake-up, log channel, send acknowledged),
     * delivered -> arrival in this JVM (the reader's fetch).
     */
    private static String breakdown(Settings s, int first, DaemonProcess daemon, long[] sentAt, long[] arrivedAt) {
        ObjectMapper json = new ObjectMapper();
        long[] ingest = new long[sentAt.length];
        long[] dispatch = new long[sentAt.length];
        long[] fetch = new long[sentAt.length];
        try {
            for (int j = 0; j < sentAt.length; j++) {
                JsonNode a = json.readTree(daemon.getBody("/api/alerts?experiment=" + latId(first + j + s.alertWarmup()))).get(0);
                long created = Instant.parse(a.path("createdAt").asText()).toEpochMilli();
                long delivered = created;
                for (JsonNode d : a.path("deliveries")) {
                    if ("kafka".equals(d.path("channel").asText())) {
                        delivered = Instant.parse(d.path("deliveredAt").asText()).toEpochMilli();
                    }
                }
                ingest[j] = (created - sentAt[j]) * 1_000_000;
                dispatch[j] = (delivered - created) * 1_000_000;
                fetch[j] = (arrivedAt[j] - delivered) * 1_000_000;
            }
        } catch (IOException | RuntimeException e) {
            return "  (no breakdown: " + e + ")";
        }
        return String.format(Locale.ROOT, "  p50 / p99 of the parts (ms): sent -> alert committed %.0f / %.0f; "
                        + "committed -> Kafka delivery acknowledged %.0f / %.0f; acknowledged -> arrival %.0f / %.0f",
                millis(percentile(sorted(ingest), 0.5)), millis(percentile(sorted(ingest), 0.99)),
                millis(percentile(sorted(dispatch), 0.5)), millis(percentile(sorted(dispatch), 0.99)),
                millis(percentile(sorted(fetch), 0.5)), millis(percentile(sorted(fetch), 0.99)));
    }

    private static long[] sorted(long[] values) {
        long[] copy = values.clone();
        Arrays.sort(copy);
        return copy;
    }

    private record Arrival(String key, long nanos) {
    }

    /** Reads the alert topic from its current end and queues each record's key with its arrival time. */
    private static Thread alertReader(String servers, BlockingQueue<Arrival> out, AtomicBoolean stop) {
        Thread t = new Thread(() -> {
            try (KafkaConsumer<String, String> c = BenchSupport.atEnd(servers, ALERTS)) {
                while (!stop.get()) {
                    ConsumerRecords<String, String> records = c.poll(Duration.ofMillis(50));
                    long now = System.nanoTime();
                    for (ConsumerRecord<String, String> r : records) {
                        out.add(new Arrival(r.key(), now));
                    }
                }
            }
        }, "bench-alert-reader");
        t.setDaemon(true);
        return t;
    }

    private static long awaitAlert(BlockingQueue<Arrival> arrivals, String key, Duration max)
            throws InterruptedException {
        long deadline = System.nanoTime() + max.toNanos();
        while (true) {
            long left = deadline - System.nanoTime();
            Arrival a = arrivals.poll(Math.max(0, left), TimeUnit.NANOSECONDS);
            if (a == null) {
                throw new IllegalStateException("no alert for " + key + " within " + max);
            }
            if (key.equals(a.key())) {
                return a.nanos();
            }
        }
    }

    // ------------------------------------------------------------------ heap

    private static void runHeapDaemon(Settings s, String servers, Path dir, List<String> report) throws Exception {
        Path plans = Files.createDirectories(dir.resolve("heap-plans"));
        for (int i = 0; i < s.heapExperiments(); i++) {
            String id = String.format(Locale.ROOT, "bookshop-%05d", i);
            Files.writeString(plans.resolve(id + ".yaml"), plan(id, 100_000));
        }
        String jdbc = "jdbc:h2:file:" + dir.resolve("heap-db").resolve("stopline").toAbsolutePath();
        Path log = dir.resolve("heap-daemon.log");
        List<String> jvm = List.of("-Xmx" + s.xmx(), "-Dstopline.topics.counts=heap.counts",
                "-Dstopline.topics.alerts=heap.alerts", "-Dstopline.topics.dead-letters=heap.dlq",
                "-Dstopline.consumer-group=stopline-heap");
        long t0 = System.nanoTime();
        try (DaemonProcess daemon = DaemonProcess.serve(jvm, List.of("--bootstrap-servers", servers, "--jdbc-url", jdbc,
                "--plans-dir", plans.toString()), log);
             KafkaProducer<String, String> producer = producer(servers, 5)) {
            double ready = seconds(System.nanoTime() - t0);
            SplittableRandom random = new SplittableRandom(20270302L);
            long t1 = System.nanoTime();
            long[][] c = new long[s.heapExperiments()][4];
            for (int k = 1; k <= s.heapSnapshots(); k++) {
                for (int i = 0; i < s.heapExperiments(); i++) {
                    String id = String.format(Locale.ROOT, "bookshop-%05d", i);
                    c[i][0] += 950 + random.nextInt(101);
                    c[i][1] += 90 + random.nextInt(21);
                    c[i][2] += 950 + random.nextInt(101);
                    c[i][3] += 90 + random.nextInt(21);
                    producer.send(new ProducerRecord<>("heap.counts", id,
                            Counts.proportion(id, k, "orders", c[i][0], c[i][1], c[i][2], c[i][3])));
                }
            }
            producer.flush();
            long total = (long) s.heapExperiments() * s.heapSnapshots();
            awaitProcessed(daemon, total, Duration.ofSeconds(1800), 500);
            double ingest = seconds(System.nanoTime() - t1);
            Map<String, Double> outcomes = snapshotOutcomes(daemon);
            jcmd(daemon.pid(), "GC.run");
            double heapMiB = heapUsedBytes(daemon) / (1024.0 * 1024.0);
            String info = jcmd(daemon.pid(), "GC.heap_info");
            report.add(String.format(Locale.ROOT, "heap: %d plans registered from a plans directory, daemon ready in "
                    + "%.1f s; %d snapshots (%d each) ingested in %.1f s (%.0f/s); outcomes %s",
                    s.heapExperiments(), ready, total, s.heapSnapshots(), ingest, total / ingest, outcomes));
            report.add(String.format(Locale.ROOT, "  used heap after jcmd GC.run: %.1f MiB "
                    + "(jvm_memory_used_bytes{area=\"heap\"}, -Xmx%s; target < 512 MiB: %s)",
                    heapMiB, s.xmx(), heapMiB < 512 ? "met" : "missed"));
            report.add("  GC.heap_info: " + info.strip().replace("\n", "\n    "));
            daemon.terminate(Duration.ofSeconds(30));
        } catch (RuntimeException e) {
            System.err.println("heap daemon log tail:\n" + tail(log, 40));
            throw e;
        }
    }

    private static double heapUsedBytes(DaemonProcess daemon) {
        double sum = 0;
        for (String line : daemon.getBody("/q/metrics").split("\n")) {
            if (line.startsWith("jvm_memory_used_bytes{") && line.contains("area=\"heap\"")) {
                sum += value(line);
            }
        }
        return sum;
    }

    // ------------------------------------------------------------------ metrics and plumbing

    /** Every snapshot the daemon has finished with: all outcomes plus dead letters. */
    private static long processed(DaemonProcess daemon) {
        double sum = deadLetters(daemon);
        for (double v : snapshotOutcomes(daemon).values()) {
            sum += v;
        }
        return Math.round(sum);
    }

    /** Polls until the daemon has processed {@code target} snapshots; returns {@link System#nanoTime()} then. */
    private static long awaitProcessed(DaemonProcess daemon, long target, Duration max, long pollMillis)
            throws InterruptedException {
        long deadline = System.nanoTime() + max.toNanos();
        long seen;
        while ((seen = processed(daemon)) < target) {
            if (System.nanoTime() > deadline) {
                throw new IllegalStateException("daemon processed " + seen + " of " + target + " within " + max);
            }
            Thread.sleep(pollMillis);
        }
        return System.nanoTime();
    }

    /** Polls every 50 ms until the experiment's last evaluated sequence reaches {@code sequence}; returns the time then. */
    private static long awaitSequence(DaemonProcess daemon, String experiment, long sequence, Duration max)
            throws InterruptedException {
        Pattern lastSequence = Pattern.compile("\"lastSequence\"\\s*:\\s*(\\d+)");
        long deadline = System.nanoTime() + max.toNanos();
        while (true) {
            Matcher m = lastSequence.matcher(daemon.getBody("/api/experiments/" + experiment));
            if (m.find() && Long.parseLong(m.group(1)) >= sequence) {
                return System.nanoTime();
            }
            if (System.nanoTime() > deadline) {
                throw new IllegalStateException(experiment + " did not reach sequence " + sequence + " within " + max);
            }
            Thread.sleep(50);
        }
    }

    private static Map<String, Double> snapshotOutcomes(DaemonProcess daemon) {
        Map<String, Double> out = new java.util.TreeMap<>();
        for (String line : daemon.getBody("/q/metrics").split("\n")) {
            if (line.startsWith("stopline_snapshots_total{")) {
                int a = line.indexOf("outcome=\"") + 9;
                out.put(line.substring(a, line.indexOf('"', a)), value(line));
            }
        }
        return out;
    }

    private static double deadLetters(DaemonProcess daemon) {
        return deadLettersByReason(daemon).values().stream().mapToDouble(Double::doubleValue).sum();
    }

    /** {@code stopline_dead_letters_total} per reason label. */
    private static Map<String, Double> deadLettersByReason(DaemonProcess daemon) {
        Map<String, Double> byReason = new java.util.TreeMap<>();
        Pattern reason = Pattern.compile("reason=\"([^\"]*)\"");
        for (String line : daemon.getBody("/q/metrics").split("\n")) {
            if (line.startsWith("stopline_dead_letters_total{")) {
                Matcher m = reason.matcher(line);
                byReason.merge(m.find() ? m.group(1) : "?", value(line), Double::sum);
            }
        }
        return byReason;
    }

    private static double value(String metricLine) {
        return Double.parseDouble(metricLine.substring(metricLine.lastIndexOf(' ') + 1));
    }

    /** A small group-sequential plan (Counts.plan: OBF-type, 5 looks) sized to {@code maxUnits} per arm. */
    private static String plan(String id, long maxUnits) {
        return Counts.plan(id).replace("maxUnitsPerArm: 10000", "maxUnitsPerArm: " + maxUnits);
    }

    private static String tpId(int i) {
        return String.format(Locale.ROOT, "checkout-%03d", i);
    }

    private static String trafficId(int i) {
        return String.format(Locale.ROOT, "wishlist-%03d", i);
    }

    private static String latId(int i) {
        return String.format(Locale.ROOT, "gift-wrap-%03d", i);
    }

    private static String loadAverage() {
        try {
            return Files.readString(Path.of("/proc/loadavg")).strip();
        } catch (IOException e) {
            return "unknown";
        }
    }
}
