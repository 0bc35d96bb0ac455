package dev.stopline.bench;

import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.monitor.MonitorState;
import dev.stopline.monitor.Monitoring;
import dev.stopline.plan.PlanParser;
import dev.stopline.service.store.Store;
import dev.stopline.testing.Counts;
import dev.stopline.wire.SnapshotParser;
import java.lang.management.ManagementFactory;
import java.lang.management.ThreadMXBean;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.SplittableRandom;
import org.flywaydb.core.Flyway;
import org.h2.jdbcx.JdbcConnectionPool;

/**
 * The CPU cost of the daemon's ingest path without Kafka: the same {@link Monitoring} pipeline and
 * {@link Store#commitBatch} the consumer uses, on an H2 file database, in batches the size of a poll.
 * It reports CPU microseconds per snapshot of the calling thread (so a busy machine changes the wall
 * time, not the figure) split into parse + evaluate and the database commit. A tool for finding where
 * the time goes; {@link IngestBenchmark} is the end-to-end measurement through a real broker.
 *
 * <pre>java -cp "target/test-classes:target/classes:$(cat target/classpath.txt)" dev.stopline.bench.IngestPathBenchmark</pre>
 * System properties: {@code path.experiments} (100), {@code path.rounds} (2000), {@code path.batch} (500).
 */
public final class IngestPathBenchmark {
    private IngestPathBenchmark() {
    }

    public static void main(String[] args) throws Exception {
        int experiments = Integer.getInteger("path.experiments", 100);
        int rounds = Integer.getInteger("path.rounds", 2000);
        int batchSize = Integer.getInteger("path.batch", 500);
        Path dir = Files.createTempDirectory("stopline-path-");
        JdbcConnectionPool ds = JdbcConnectionPool.create("jdbc:h2:file:" + dir.resolve("db").toAbsolutePath(), "", "");
        try {
            Flyway.configure().dataSource(ds).locations("classpath:db/migration").load().migrate();
            Store store = new Store(ds);
            Map<String, ExperimentMonitor> monitors = new HashMap<>();
            for (int i = 0; i < experiments; i++) {
                String id = "path-" + i;
                String yaml = Counts.plan(id).replace("maxUnitsPerArm: 10000", "maxUnitsPerArm: " + 100L * rounds);
                monitors.put(id, ExperimentMonitor.of(PlanParser.parseYaml(yaml), 1));
            }
            List<byte[]> values = new ArrayList<>();
            List<String> keys = new ArrayList<>();
            SplittableRandom random = new SplittableRandom(20270301L);
            long[][] c = new long[experiments][4];
            for (int k = 1; k <= rounds; k++) {
                for (int i = 0; i < experiments; i++) {
                    c[i][0] += 95 + random.nextInt(11);
                    c[i][1] += random.nextInt(21);
                    c[i][2] += 95 + random.nextInt(11);
                    c[i][3] += random.nextInt(21);
                    keys.add("path-" + i);
                    values.add(Counts.proportion("path-" + i, k, "orders", c[i][0], c[i][1], c[i][2], c[i][3])
                            .getBytes(StandardCharsets.UTF_8));
                }
            }
            Monitoring monitoring = new Monitoring(SnapshotParser.withDefaults(), monitors::get);
            Map<String, MonitorState> states = new HashMap<>();
            ThreadMXBean threads = ManagementFactory.getThreadMXBean();
            int half = values.size() / 2;
            long evalCpu = 0;
            long commitCpu = 0;
            long wall0 = 0;
            long offset = 0;
            for (int from = 0; from < values.size(); from += batchSize) {
                if (from >= half && wall0 == 0) { // the first half warms the JIT up
                    evalCpu = 0;
                    commitCpu = 0;
                    wall0 = System.nanoTime();
                }
                long t0 = threads.getCurrentThreadCpuTime();
                List<Store.Change> changes = new ArrayList<>();
                for (int j = from; j < Math.min(values.size(), from + batchSize); j++) {
                    Monitoring.Step step = monitoring.process(values.get(j), keys.get(j), states::get);
                    if (!(step instanceof Monitoring.Evaluated e)) {
                        throw new IllegalStateException("not evaluated: " + step);
                    }
                    states.put(e.evaluation().state().experiment(), e.evaluation().state());
                    changes.add(Store.Change.evaluated(e.evaluation(), "running", new Store.Position(0, offset++)));
                }
                long t1 = threads.getCurrentThreadCpuTime();
                store.commitBatch(changes, List.of("log", "kafka"), Instant.now());
                long t2 = threads.getCurrentThreadCpuTime();
                evalCpu += t1 - t0;
                commitCpu += t2 - t1;
            }
            long wall = System.nanoTime() - wall0;
            int measured = values.size() - half;
            System.out.printf(Locale.ROOT, "%d snapshots measured (%d experiments, batches of %d): CPU per snapshot "
                            + "parse+evaluate %.1f us, commit %.1f us, total %.1f us; wall %.0f snapshots/s%n",
                    measured, experiments, batchSize, evalCpu / 1e3 / measured, commitCpu / 1e3 / measured,
                    (evalCpu + commitCpu) / 1e3 / measured, measured / (wall / 1e9));
        } finally {
            ds.dispose();
            try (var walk = Files.walk(dir)) {
                walk.sorted(java.util.Comparator.reverseOrder()).forEach(p -> p.toFile().delete());
            }
        }
    }
}
