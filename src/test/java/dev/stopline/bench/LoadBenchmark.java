package dev.stopline.bench;

import static dev.stopline.bench.BenchSupport.millis;
import static dev.stopline.bench.BenchSupport.percentile;
import static dev.stopline.bench.BenchSupport.seconds;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.stopline.bench.BenchSupport.Arrival;
import dev.stopline.bench.BenchSupport.Scrape;
import dev.stopline.bench.BenchSupport.TopicReader;
import dev.stopline.service.broker.EmbeddedKafka;
import dev.stopline.testing.DaemonProcess;
import dev.stopline.testing.FreePorts;
import dev.stopline.testing.KafkaBrokerExtension;
import dev.stopline.testing.Oracle;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.time.Instant;
import java.time.LocalTime;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Set;
import java.util.SplittableRandom;
import java.util.TreeMap;
import java.util.TreeSet;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.atomic.AtomicLong;
import java.util.concurrent.atomic.AtomicReference;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerRecord;

/**
 * Load test and soak of the packaged daemon on loopback: a real embedded broker in this JVM, the daemon
 * ({@code quarkus-run.jar serve}) as a separate process on an H2 file database (or the database of
 * {@code -Dload.jdbc=...}), fed the bookshop fleet of {@link LoadStream}: {@code load.experiments} plans
 * (group-sequential and mixture SPRT, a third with a guardrail) written to a plans directory and
 * registered at start, and their snapshots on one partition of {@code stopline.counts}.
 *
 * <p><b>Load</b> ({@code load.soakMinutes} 0, the default): {@code load.snapshots} snapshots in rounds
 * (each round one snapshot of every experiment), produced as fast as the producer goes (or at
 * {@code load.rate} snapshots/s). Figures: the time to register the plan files; snapshots/s end to end,
 * from the first send until the last experiment's last snapshot is evaluated (one partition, so every
 * record before it is done); produce-to-alert latency of every alert raised during the load, from just
 * before {@code send} of the snapshot that crossed to the CloudEvent's arrival on {@code stopline.alerts}
 * in this JVM (one clock; unpaced, it includes the time the snapshot queued behind the ones produced
 * before it); dead letters (must be 0); used heap after {@code jcmd GC.run}; and, for a seeded sample of
 * experiments, the primary looks and alerts the daemon stored against {@link Oracle} (the pure evaluator
 * over the same stream).
 *
 * <p><b>Soak</b> ({@code load.soakMinutes} N > 0): a steady stream at {@code load.soakRate} snapshots/s for
 * N minutes, then it stops by itself. Every {@code load.sampleSeconds} (30) the daemon's heap after
 * {@code jcmd GC.run} (live: {@code jvm_gc_live_data_size_bytes}, the old generation after that full
 * collection; and used: {@code jvm_memory_used_bytes{area="heap"}} at the scrape, which also counts what
 * was allocated since the collection, 7 to 17 MiB more in runs at 500 snapshots/s) and its lag (records
 * produced but not yet processed), the last sample at least 5 s before the stream stops; at the end the
 * series, the least-squares slope of the live heap against time (MiB/min) over all samples and over the
 * later half of the samples taken while streaming, and the verdict "flat" when that slope is below
 * {@code load.flatMiBPerMin} (1 MiB/min); also the lag and the consumer group's committed-offset lag when
 * the stream stops, the time to drain, the heap once drained (idle, so not in the slope) and the
 * produce-to-alert latency of the alerts raised, all and those sent in the second half (a fresh daemon
 * fell behind for its first half minute in our runs: JIT warm-up, and first-snapshot work such as locking
 * each experiment's plan; the full collection forced at every sample also delays a few alerts).
 *
 * <p>{@code -Dload.jfr=/tmp/load.jfr} makes the daemon write a flight recording (registration included).
 *
 * <p>Bounded: every wait has a deadline; the daemon is stopped and the temporary directory deleted at the
 * end ({@code -Dload.keep=true} keeps it). Not part of the test run (a {@code main}, no {@code @Test}); run
 * it as DEVELOPERS.md says under "Load and soak".
 */
public final class LoadBenchmark {
    private static final String COUNTS = "stopline.counts";
    private static final String ALERTS = "stopline.alerts";
    private static final String GROUP = "stopline";
    private static final ObjectMapper JSON = new ObjectMapper();

    private LoadBenchmark() {
    }

    /** What the run does; each from a system property of the same name with the prefix {@code load.}. */
    record Settings(int experiments, long snapshots, double rate, int oracleSample, int soakMinutes,
                    double soakRate, int sampleSeconds, double flatMiBPerMin, String xmx, String jdbc, long seed,
                    boolean keep, String jfr) {
        static Settings fromSystemProperties() {
            return new Settings(Integer.getInteger("load.experiments", 10_000),
                    Long.getLong("load.snapshots", 1_000_000L),
                    Double.parseDouble(System.getProperty("load.rate", "0")),
                    Integer.getInteger("load.oracleSample", 100),
                    Integer.getInteger("load.soakMinutes", 0),
                    Double.parseDouble(System.getProperty("load.soakRate", "500")),
                    Integer.getInteger("load.sampleSeconds", 30),
                    Double.parseDouble(System.getProperty("load.flatMiBPerMin", "1.0")),
                    System.getProperty("load.xmx", "1g"),
                    System.getProperty("load.jdbc", ""),
                    Long.getLong("load.seed", 20270315L),
                    Boolean.getBoolean("load.keep"), System.getProperty("load.jfr", ""));
        }

        boolean soak() {
            return soakMinutes > 0;
        }

        /** Rounds of the stream: snapshots per experiment (the load), or what the soak's rate gives. */
        int rounds() {
            long n = soak() ? (long) Math.ceil(soakRate * 60.0 * soakMinutes / experiments) : snapshots / experiments;
            if (n < 1 || n > Integer.MAX_VALUE / 2) {
                throw new IllegalArgumentException("rounds " + n + " out of range: need snapshots >= experiments");
            }
            return (int) n;
        }
    }

    public static void main(String[] args) throws Exception {
        Settings s = Settings.fromSystemProperties();
        int rounds = s.rounds();
        if (System.getProperty("stopline.daemon.ready-seconds") == null) {
            // registering 10,000 plan files took 51 to 173 s on 2 shared cores
            System.setProperty("stopline.daemon.ready-seconds", "900");
        }
        KafkaBrokerExtension.trapExit();
        KafkaBrokerExtension.quietKafkaLogging();
        Path dir = Files.createTempDirectory("stopline-load-");
        List<String> report = new ArrayList<>();
        report.add("load average (1 / 5 / 15 min) at start: " + BenchSupport.loadAverage());
        int[] ports = FreePorts.pickTwo();
        Path log = dir.resolve("daemon.log");
        try (EmbeddedKafka broker = EmbeddedKafka.builder().port(ports[0]).controllerPort(ports[1])
                .dataDir(dir.resolve("kafka")).topic(COUNTS, 1).topic(ALERTS, 1).topic("stopline.counts.dlq", 1)
                .build().start()) {
            String servers = broker.bootstrapServers();
            Path plans = Files.createDirectories(dir.resolve("plans"));
            for (int i = 0; i < s.experiments(); i++) {
                Files.writeString(plans.resolve(LoadStream.id(i) + ".yaml"), LoadStream.plan(i, rounds));
            }
            String jdbc = s.jdbc().isBlank()
                    ? "jdbc:h2:file:" + dir.resolve("db").resolve("stopline").toAbsolutePath() : s.jdbc();
            List<String> jvm = new ArrayList<>(List.of("-Xmx" + s.xmx()));
            if (!s.jfr().isBlank()) {
                jvm.add("-XX:StartFlightRecording=filename=" + s.jfr() + ",settings=profile");
            }
            long t0 = System.nanoTime();
            try (DaemonProcess daemon = DaemonProcess.serve(jvm, List.of("--bootstrap-servers",
                    servers, "--jdbc-url", jdbc, "--plans-dir", plans.toString()), log)) {
                double ready = seconds(System.nanoTime() - t0);
                report.add(String.format(Locale.ROOT, "daemon ready in %.1f s (JVM start, migrations, %d plan files "
                                + "registered, consumer subscribed); registering the plans, from the daemon's log: %s; "
                                + "database %s; -Xmx%s", ready, s.experiments(), registrationSeconds(log),
                        s.jdbc().isBlank() ? "H2 file" : s.jdbc().replaceAll("password=[^&;]*", "password=..."),
                        s.xmx()));
                report.add(String.format(Locale.ROOT, "fleet: %d experiments (%d group-sequential, %d mixture SPRT, %d "
                                + "with a guardrail; scenarios %s), %d rounds", s.experiments(),
                        count(s, LoadStream::groupSequential), s.experiments() - count(s, LoadStream::groupSequential),
                        count(s, LoadStream::guarded), scenarioCounts(s), rounds));
                if (s.soak()) {
                    soak(s, rounds, servers, daemon, report);
                } else {
                    load(s, rounds, servers, daemon, report);
                }
                daemon.terminate(Duration.ofSeconds(30));
            } catch (RuntimeException e) {
                System.err.println("daemon log tail:\n" + BenchSupport.tail(log, 40));
                throw e;
            }
        } finally {
            report.add("load average (1 / 5 / 15 min) at end: " + BenchSupport.loadAverage());
            System.out.println();
            System.out.println(s.soak() ? "== Stopline soak ==" : "== Stopline load test ==");
            report.forEach(System.out::println);
            if (s.keep()) {
                System.out.println("kept " + dir);
            } else {
                KafkaBrokerExtension.deleteTree(dir);
            }
        }
        System.exit(0); // the broker's and clients' non-daemon threads are gone, but be sure
    }

    // ------------------------------------------------------------------ load

    private static void load(Settings s, int rounds, String servers, DaemonProcess daemon, List<String> report)
            throws Exception {
        long total = (long) s.experiments() * rounds;
        long[] sentAt = new long[Math.toIntExact(total)];
        LoadStream.Feed[] feeds = new LoadStream.Feed[s.experiments()];
        for (int i = 0; i < feeds.length; i++) {
            feeds[i] = LoadStream.feed(s.seed(), i, rounds);
        }
        long before = Scrape.of(daemon).processed();
        AtomicLong sent = new AtomicLong();
        long t0;
        long producedNanos;
        long tEnd;
        try (TopicReader alerts = TopicReader.start(servers, ALERTS);
             KafkaProducer<String, String> producer = BenchSupport.producer(servers, 5)) {
            AtomicBoolean done = new AtomicBoolean();
            long[] producerEnd = new long[1];
            t0 = System.nanoTime();
            Thread feeder = new Thread(() -> {
                for (int k = 0; k < rounds; k++) {
                    for (int i = 0; i < feeds.length; i++) {
                        pace(s.rate(), sent.get(), t0);
                        String value = feeds[i].next();
                        sentAt[i * rounds + k] = System.nanoTime();
                        producer.send(new ProducerRecord<>(COUNTS, LoadStream.id(i), value));
                        sent.incrementAndGet();
                    }
                }
                producer.flush();
                producerEnd[0] = System.nanoTime();
                done.set(true);
            }, "load-producer");
            AtomicReference<Throwable> failed = watch(feeder);
            feeder.start();
            String last = LoadStream.id(s.experiments() - 1);
            long nextProgress = t0 + Duration.ofSeconds(10).toNanos();
            long deadline = t0 + Duration.ofMinutes(120).toNanos();
            while (!(done.get() && reached(daemon, last, rounds))) {
                check(failed);
                if (System.nanoTime() > deadline) {
                    throw new IllegalStateException("load not done within 120 min: " + sent.get() + " sent");
                }
                if (System.nanoTime() > nextProgress) {
                    long processed = Scrape.of(daemon).processed() - before;
                    System.out.printf(Locale.ROOT, "%6.0f s: %,d sent, %,d processed%n",
                            seconds(System.nanoTime() - t0), sent.get(), processed);
                    nextProgress += Duration.ofSeconds(10).toNanos();
                }
                Thread.sleep(50);
            }
            tEnd = System.nanoTime();
            feeder.join();
            producedNanos = producerEnd[0] - t0;
            BenchSupport.awaitProcessed(daemon, before + total, Duration.ofSeconds(60), 200);
            report.add(String.format(Locale.ROOT, "load: %,d snapshots (%d experiments x %d rounds), %s; "
                            + "produced in %.1f s", total, s.experiments(), rounds,
                    s.rate() > 0 ? "paced at " + s.rate() + "/s" : "unpaced", seconds(producedNanos)));
            report.add(String.format(Locale.ROOT, "  end to end (first send to last snapshot evaluated): %.1f s = "
                    + "%,.0f snapshots/s", seconds(tEnd - t0), total / seconds(tEnd - t0)));
            Scrape scrape = Scrape.of(daemon);
            report.add(String.format(Locale.ROOT, "  outcomes %s; dead letters %.0f (must be 0: %s); alerts raised %s",
                    scrape.snapshotOutcomes(), scrape.deadLetters(), deadLetterVerdict(scrape),
                    scrape.byLabel("stopline_alerts_total", "kind")));
            report.add(latency(daemon, alerts, scrape.alertsRaised(), sentAt, rounds, tEnd, Long.MAX_VALUE));
        }
        report.add(oracleCheck(s, rounds, daemon));
        BenchSupport.jcmd(daemon.pid(), "GC.run");
        Scrape heap = Scrape.of(daemon);
        report.add(String.format(Locale.ROOT, "  heap after jcmd GC.run at the end: used %.1f MiB "
                        + "(jvm_memory_used_bytes{area=\"heap\"}), live %.1f MiB (jvm_gc_live_data_size_bytes); -Xmx%s",
                heap.heapUsedBytes() / (1024.0 * 1024.0), heap.liveAfterGcBytes() / (1024.0 * 1024.0), s.xmx()));
    }

    /** "met" without dead letters, else their counts by reason. */
    private static String deadLetterVerdict(Scrape scrape) {
        return scrape.deadLetters() == 0 ? "met"
                : "MISSED, by reason " + scrape.byLabel("stopline_dead_letters_total", "reason");
    }

    /** Whether the experiment's last evaluated sequence has reached {@code sequence}. */
    private static boolean reached(DaemonProcess daemon, String experiment, long sequence) {
        try {
            JsonNode n = JSON.readTree(daemon.getBody("/api/experiments/" + experiment));
            return n.path("summary").path("lastSequence").asLong(-1) >= sequence;
        } catch (IOException | RuntimeException e) {
            return false;
        }
    }

    /** What ends a producer thread abnormally, so that the waits around it fail at once, not at their deadline. */
    private static AtomicReference<Throwable> watch(Thread producer) {
        AtomicReference<Throwable> failed = new AtomicReference<>();
        producer.setUncaughtExceptionHandler((t, e) -> failed.set(e));
        return failed;
    }

    private static void check(AtomicReference<Throwable> failed) {
        if (failed.get() != null) {
            throw new IllegalStateException("the producer thread failed", failed.get());
        }
    }

    /** Sleeps while {@code sent} is ahead of {@code rate} snapshots per second since {@code t0} (rate 0: never). */
    private static void pace(double rate, long sent, long t0) {
        if (rate <= 0) {
            return;
        }
        long due = t0 + (long) (sent / rate * 1e9);
        long wait = due - System.nanoTime();
        if (wait > 1_000_000) {
            try {
                Thread.sleep(wait / 1_000_000);
            } catch (InterruptedException e) {
                Thread.currentThread().interrupt();
            }
        }
    }

    /**
     * Waits until every alert the daemon counts has arrived on the alert topic (distinct CloudEvent ids;
     * delivery is at least once), then the produce-to-alert latencies: arrival minus the send time of the
     * snapshot that crossed ({@code data.experiment}, {@code data.sequence}); separately those whose
     * snapshot was sent at or after {@code steadyFrom} (the soak's second half, past the start-up lag).
     */
    private static String latency(DaemonProcess daemon, TopicReader reader, double raised, long[] sentAt, int rounds,
                                  long windowEnd, long steadyFrom) throws InterruptedException {
        Map<String, Long> arrivals = new TreeMap<>();
        List<Crossing> crossings = new ArrayList<>();
        List<Long> latencies = new ArrayList<>();
        List<Long> steady = new ArrayList<>();
        Map<String, Integer> kinds = new TreeMap<>();
        long deadline = System.nanoTime() + Duration.ofSeconds(120).toNanos();
        int duplicates = 0;
        int foreign = 0;
        while (arrivals.size() < raised && System.nanoTime() < deadline) {
            Thread.sleep(100);
            for (Arrival a : reader.drain()) {
                JsonNode event;
                try {
                    event = JSON.readTree(a.value());
                } catch (IOException e) {
                    foreign++;
                    continue;
                }
                String id = event.path("id").asText();
                if (arrivals.putIfAbsent(id, a.nanos()) != null) {
                    duplicates++;
                    continue;
                }
                JsonNode data = event.path("data");
                int i = LoadStream.index(data.path("experiment").asText());
                long seq = data.path("sequence").asLong(0);
                if (i < 0 || seq < 1 || seq > rounds || sentAt[i * rounds + (int) seq - 1] == 0) {
                    foreign++;
                    continue;
                }
                long sent = sentAt[i * rounds + (int) seq - 1];
                latencies.add(a.nanos() - sent);
                crossings.add(new Crossing(id, data.path("experiment").asText(), sent, a.nanos()));
                if (sent >= steadyFrom) {
                    steady.add(a.nanos() - sent);
                }
                kinds.merge(data.path("kind").asText("?"), 1, Integer::sum);
            }
        }
        if (latencies.isEmpty()) {
            return String.format(Locale.ROOT, "  produce-to-alert: no alert arrived (%.0f raised)", raised);
        }
        long afterWindow = arrivals.values().stream().filter(t -> t > windowEnd).count();
        String out = String.format(Locale.ROOT, "  produce-to-alert latency over %d alerts (%.0f raised; %s; %d "
                        + "duplicate deliveries, %d unmatched; %d arrived after %s): %s", latencies.size(), raised,
                kinds, duplicates, foreign, afterWindow,
                steadyFrom == Long.MAX_VALUE ? "the last snapshot was evaluated" : "the stream stopped",
                percentiles(latencies));
        if (steadyFrom != Long.MAX_VALUE) {
            out += String.format(Locale.ROOT, "%n  of those, the %d whose snapshot was sent in the second half: %s",
                    steady.size(), steady.isEmpty() ? "none" : percentiles(steady));
        }
        return out + "\n" + parts(daemon, crossings);
    }

    /** An alert that arrived: its id, experiment, and when its snapshot was sent and it arrived (nanoTime). */
    private record Crossing(String id, String experiment, long sentNanos, long arrivedNanos) {
    }

    /**
     * The latency in two parts, from the time the daemon stamps on the alert row ({@code createdAt},
     * committed with the evaluation; millisecond resolution, the same machine clock): sent to committed
     * (waiting in the topic behind earlier snapshots, evaluation, transaction) and committed to arrival
     * (outbox dispatcher, the Kafka send, the reader's fetch).
     */
    private static String parts(DaemonProcess daemon, List<Crossing> crossings) {
        long wallMinusNanos = System.currentTimeMillis() * 1_000_000 - System.nanoTime();
        Map<String, Long> committedAt = new TreeMap<>(); // alert id -> epoch ms
        try {
            for (String experiment : new TreeSet<>(crossings.stream().map(Crossing::experiment).toList())) {
                for (JsonNode a : JSON.readTree(daemon.getBody("/api/alerts?experiment=" + experiment))) {
                    committedAt.put(a.path("alert").path("id").asText(),
                            Instant.parse(a.path("createdAt").asText()).toEpochMilli());
                }
            }
        } catch (IOException | RuntimeException e) {
            return "  (no split into parts: " + e + ")";
        }
        List<Long> toCommit = new ArrayList<>();
        List<Long> toArrival = new ArrayList<>();
        for (Crossing c : crossings) {
            Long ms = committedAt.get(c.id());
            if (ms != null) {
                long committed = ms * 1_000_000 - wallMinusNanos;
                toCommit.add(committed - c.sentNanos());
                toArrival.add(c.arrivedNanos() - committed);
            }
        }
        if (toCommit.isEmpty()) {
            return "  (no split into parts: no alert row matched the CloudEvent ids)";
        }
        return String.format(Locale.ROOT, "  parts, from the alert rows' createdAt (%d alerts): sent -> committed %s; "
                + "committed -> arrival %s", toCommit.size(), percentiles(toCommit), percentiles(toArrival));
    }

    private static String percentiles(List<Long> nanos) {
        long[] sorted = nanos.stream().mapToLong(Long::longValue).sorted().toArray();
        return String.format(Locale.ROOT, "p50 %.0f ms, p99 %.0f ms, max %.0f ms", millis(percentile(sorted, 0.5)),
                millis(percentile(sorted, 0.99)), millis(sorted[sorted.length - 1]));
    }

    /**
     * For a seeded sample of experiments: the primary looks and the alert ids the daemon stored, against
     * the pure evaluator over the same stream drawn again.
     */
    private static String oracleCheck(Settings s, int rounds, DaemonProcess daemon) {
        int n = Math.min(s.oracleSample(), s.experiments());
        int[] sample = new SplittableRandom(s.seed() ^ 0x5DEECE66DL).ints(0, s.experiments()).distinct().limit(n)
                .sorted().toArray();
        int looksMatched = 0;
        int alertsMatched = 0;
        long looks = 0;
        long alerts = 0;
        List<String> mismatches = new ArrayList<>();
        for (int i : sample) {
            LoadStream.Feed feed = LoadStream.feed(s.seed(), i, rounds);
            List<String> lines = new ArrayList<>(rounds);
            for (int k = 0; k < rounds; k++) {
                lines.add(feed.next());
            }
            String id = LoadStream.id(i);
            Oracle expected = Oracle.of(LoadStream.plan(i, rounds), id, lines);
            List<Long> storedLooks = daemon.primaryLookSequences(id);
            Set<String> storedAlerts = new TreeSet<>(daemon.alertIds(id));
            looks += expected.primaryLookSequences().size();
            alerts += expected.alertIds().size();
            if (storedLooks.equals(expected.primaryLookSequences())) {
                looksMatched++;
            } else if (mismatches.size() < 5) {
                mismatches.add(id + " looks " + storedLooks + " expected " + expected.primaryLookSequences());
            }
            if (storedAlerts.equals(new TreeSet<>(expected.alertIds()))) {
                alertsMatched++;
            } else if (mismatches.size() < 5) {
                mismatches.add(id + " alerts " + storedAlerts + " expected " + expected.alertIds());
            }
        }
        return String.format(Locale.ROOT, "  oracle, %d sampled experiments (%d primary looks, %d alerts expected): "
                        + "primary looks equal in %d, alert ids equal in %d (%s)%s", n, looks, alerts, looksMatched,
                alertsMatched, looksMatched == n && alertsMatched == n ? "met" : "MISSED",
                mismatches.isEmpty() ? "" : "; first differences: " + mismatches);
    }

    // ------------------------------------------------------------------ soak

    /** One soak sample: live heap after the full collection (the slope's series), used heap at the scrape. */
    private record Sample(double minutes, double heapMiB, double usedMiB, long processed, long lag) {
    }

    private static void soak(Settings s, int rounds, String servers, DaemonProcess daemon, List<String> report)
            throws Exception {
        // plans are sized for `rounds`; the stream may run a little longer (a slow producer never runs dry
        // before the time is up; later snapshots are still checked for sample ratio and guardrails)
        int capacity = rounds + rounds / 10 + 2;
        long[] sentAt = new long[Math.toIntExact((long) s.experiments() * capacity)];
        LoadStream.Feed[] feeds = new LoadStream.Feed[s.experiments()];
        for (int i = 0; i < feeds.length; i++) {
            feeds[i] = LoadStream.feed(s.seed(), i, rounds);
        }
        long startOffset = BenchSupport.endOffset(servers, COUNTS);
        long processedBefore = Scrape.of(daemon).processed();
        long duration = Duration.ofMinutes(s.soakMinutes()).toNanos();
        AtomicLong sent = new AtomicLong();
        AtomicBoolean stop = new AtomicBoolean();
        List<Sample> series = new ArrayList<>();
        try (TopicReader alerts = TopicReader.start(servers, ALERTS);
             KafkaProducer<String, String> producer = BenchSupport.producer(servers, 5)) {
            series.add(sample(daemon, servers, 0, startOffset, processedBefore));
            long t0 = System.nanoTime();
            Thread feeder = new Thread(() -> {
                for (int j = 0; j < sentAt.length && !stop.get() && System.nanoTime() - t0 < duration; j++) {
                    pace(s.soakRate(), j, t0);
                    int i = j % feeds.length;
                    int k = j / feeds.length;
                    String value = feeds[i].next();
                    sentAt[i * capacity + k] = System.nanoTime();
                    producer.send(new ProducerRecord<>(COUNTS, LoadStream.id(i), value));
                    sent.incrementAndGet();
                }
                producer.flush();
            }, "soak-producer");
            AtomicReference<Throwable> failed = watch(feeder);
            feeder.start();
            long period = Duration.ofSeconds(s.sampleSeconds()).toNanos();
            // samples while the stream runs (the last one at least 5 s before it stops); one more once drained
            for (long next = t0 + period; next < t0 + duration - Duration.ofSeconds(5).toNanos(); next += period) {
                Thread.sleep(Math.max(0, (next - System.nanoTime()) / 1_000_000));
                check(failed);
                Sample x = sample(daemon, servers, seconds(System.nanoTime() - t0) / 60, startOffset, processedBefore);
                series.add(x);
                System.out.printf(Locale.ROOT, "%5.1f min: live heap after GC %.1f MiB (used %.1f), %,d processed, "
                        + "lag %,d%n", x.minutes(), x.heapMiB(), x.usedMiB(), x.processed(), x.lag());
            }
            feeder.join(Duration.ofSeconds(60).toMillis());
            stop.set(true);
            feeder.join();
            check(failed);
            long produced = sent.get();
            long endOffset = BenchSupport.endOffset(servers, COUNTS);
            long committedLag = endOffset - BenchSupport.committedOffset(servers, GROUP, COUNTS);
            long processedLag = endOffset - startOffset - (Scrape.of(daemon).processed() - processedBefore);
            long tStop = System.nanoTime();
            BenchSupport.awaitProcessed(daemon, processedBefore + produced, Duration.ofMinutes(30), 200);
            double drain = seconds(System.nanoTime() - tStop);
            Sample idle = sample(daemon, servers, seconds(System.nanoTime() - t0) / 60, startOffset, processedBefore);
            Scrape scrape = Scrape.of(daemon);
            report.add(String.format(Locale.ROOT, "soak: %d min at %.0f snapshots/s: %,d snapshots produced (%.1f "
                            + "rounds of %d experiments)", s.soakMinutes(), s.soakRate(), produced,
                    produced / (double) s.experiments(), s.experiments()));
            report.add(String.format(Locale.ROOT, "  lag when the stream stopped: %,d records not yet processed; %,d "
                    + "behind the group's committed offset (commits are throttled); drained in %.1f s", processedLag,
                    committedLag, drain));
            report.add(String.format(Locale.ROOT, "  outcomes %s; dead letters %.0f (must be 0: %s); alerts raised %s",
                    scrape.snapshotOutcomes(), scrape.deadLetters(), deadLetterVerdict(scrape),
                    scrape.byLabel("stopline_alerts_total", "kind")));
            report.add(latency(daemon, alerts, scrape.alertsRaised(), sentAt, capacity, tStop, t0 + duration / 2));
            report.add(String.format(Locale.ROOT, "  once drained (stream stopped, not in the slope): live heap "
                    + "after jcmd GC.run %.1f MiB, used %.1f MiB", idle.heapMiB(), idle.usedMiB()));
        }
        report.add("  every " + s.sampleSeconds() + " s after jcmd GC.run: live heap (jvm_gc_live_data_size_bytes), "
                + "used heap at the scrape (jvm_memory_used_bytes{area=\"heap\"}), snapshots processed, "
                + "lag (records):");
        for (Sample x : series) {
            report.add(String.format(Locale.ROOT, "    %5.2f min  live %6.1f MiB  used %6.1f MiB  %,10d processed  "
                    + "lag %,d", x.minutes(), x.heapMiB(), x.usedMiB(), x.processed(), x.lag()));
        }
        double all = slope(series);
        // the second half: the later half of the samples taken while the stream ran (the one at 0 is before it)
        List<Sample> streaming = series.subList(1, series.size());
        List<Sample> half = streaming.subList(streaming.size() / 2, streaming.size());
        double secondHalf = slope(half);
        String verdict = Double.isNaN(secondHalf) ? "undetermined (fewer than 2 samples in the second half)"
                : secondHalf < s.flatMiBPerMin() ? "flat" : "GROWING";
        report.add(String.format(Locale.ROOT, "  least-squares slope of the live heap: %.2f MiB/min over all %d "
                        + "samples, %.2f MiB/min over the %d samples of the second half; verdict: %s (flat = "
                        + "second-half slope below %.1f MiB/min)", all, series.size(), secondHalf, half.size(), verdict,
                s.flatMiBPerMin()));
    }

    private static Sample sample(DaemonProcess daemon, String servers, double minutes, long startOffset,
                                 long processedBefore) {
        BenchSupport.jcmd(daemon.pid(), "GC.run");
        Scrape scrape = Scrape.of(daemon);
        long processed = scrape.processed() - processedBefore;
        long produced = BenchSupport.endOffset(servers, COUNTS) - startOffset;
        double mib = 1024.0 * 1024.0;
        return new Sample(minutes, scrape.liveAfterGcBytes() / mib, scrape.heapUsedBytes() / mib, processed,
                produced - processed);
    }

    /** Least-squares slope of live heap (MiB) on time (minutes); NaN with fewer than two samples. */
    private static double slope(List<Sample> xs) {
        return BenchSupport.slope(xs.stream().mapToDouble(Sample::minutes).toArray(),
                xs.stream().mapToDouble(Sample::heapMiB).toArray());
    }

    // ------------------------------------------------------------------ fleet description and the daemon's log

    private static int count(Settings s, java.util.function.IntPredicate p) {
        int n = 0;
        for (int i = 0; i < s.experiments(); i++) {
            n += p.test(i) ? 1 : 0;
        }
        return n;
    }

    private static Map<LoadStream.Scenario, Integer> scenarioCounts(Settings s) {
        Map<LoadStream.Scenario, Integer> out = new TreeMap<>();
        for (int i = 0; i < s.experiments(); i++) {
            out.merge(LoadStream.scenario(i), 1, Integer::sum);
        }
        return out;
    }

    /**
     * The time between the daemon's first log line and its "N stopping plans active" line (both stamped
     * HH:mm:ss.SSS by the log format), i.e. start-up up to the end of plan registration.
     */
    private static String registrationSeconds(Path log) {
        try {
            List<String> lines = Files.readAllLines(log);
            LocalTime first = null;
            for (String line : lines) {
                LocalTime t = stamp(line);
                if (t != null && first == null) {
                    first = t;
                }
                if (t != null && line.contains("stopping plans active")) {
                    double s = Duration.between(first, t).toMillis() / 1000.0;
                    return String.format(Locale.ROOT, "%.1f s from the first log line to \"%s\"",
                            s < 0 ? s + 86_400 : s, line.substring(line.lastIndexOf(']') + 2));
                }
            }
            return "(no \"stopping plans active\" line in the log)";
        } catch (IOException e) {
            return "(no log: " + e.getMessage() + ")";
        }
    }

    private static LocalTime stamp(String line) {
        if (line.length() < 12 || line.charAt(2) != ':' || line.charAt(8) != '.') {
            return null;
        }
        try {
            return LocalTime.parse(line.substring(0, 12));
        } catch (RuntimeException e) {
            return null;
        }
    }
}
