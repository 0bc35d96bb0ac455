package dev.stopline.cli;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.stopline.demo.BookshopScenario;
import dev.stopline.wire.Snapshot;
import dev.stopline.wire.SnapshotWriter;
import io.quarkus.runtime.Quarkus;
import io.quarkus.runtime.QuarkusApplication;
import java.io.IOException;
import java.io.PrintStream;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.time.Instant;
import java.util.Comparator;
import java.util.List;
import java.util.Properties;
import java.util.UUID;
import java.util.concurrent.Callable;
import java.util.concurrent.atomic.AtomicInteger;
import java.util.stream.Stream;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.consumer.KafkaConsumer;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.common.serialization.StringDeserializer;
import org.apache.kafka.common.serialization.StringSerializer;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Option;

/**
 * {@code demo}: the whole job on the embedded defaults in about a minute. Starts the daemon (embedded
 * broker, fresh H2 database under {@code data/demo}), registers the example plans of
 * {@code config/plans}, feeds the invented bookshop scenario in accelerated time (one simulated hour
 * per {@code --pace}) and prints each alert as it arrives on the alert topic.
 */
@Command(name = "demo", mixinStandardHelpOptions = true,
        description = "Run the daemon on embedded defaults and feed an invented bookshop scenario; alerts are "
                + "printed as they fire.")
public final class DemoCommand implements Callable<Integer> {
    @Mixin
    DaemonOptions serve = new DaemonOptions();

    @Option(names = "--hours", defaultValue = "60", description = "Simulated hours to feed (default: ${DEFAULT-VALUE}).")
    int hours;

    @Option(names = "--pace", defaultValue = "PT0.4S",
            description = "Wall time per simulated hour, ISO-8601 (default: ${DEFAULT-VALUE}).")
    Duration pace;

    @Option(names = "--exit-when-done", description = "Stop the daemon once the scenario is fed and its alerts printed.")
    boolean exitWhenDone;

    @Option(names = "--seed", defaultValue = "20270301", description = "Scenario seed (default: ${DEFAULT-VALUE}).")
    long seed;

    static volatile DemoCommand current;

    @Override
    public Integer call() {
        Path dir = serve.dataDir.resolve("demo");
        deleteRecursively(dir);
        current = this;
        return serve.launch(Feeder.class, dir);
    }

    /** Runs inside the started daemon: feeds the scenario and prints alerts. */
    public static final class Feeder implements QuarkusApplication {
        @Override
        public int run(String... args) throws Exception {
            DemoCommand demo = current;
            PrintStream out = System.out;
            String servers = System.getProperty("kafka.bootstrap.servers");
            out.printf("Stopline demo: status page http://localhost:%d/  API http://localhost:%d/api/experiments%n",
                    demo.serve.port, demo.serve.port);
            out.printf("Feeding %d simulated hours of an invented bookshop (3 experiments), one hour every %d ms.%n",
                    demo.hours, demo.pace.toMillis());
            AtomicInteger printed = new AtomicInteger();
            Thread printer = new Thread(() -> printAlerts(servers, out, printed), "demo-alert-printer");
            printer.setDaemon(true);
            printer.start();
            BookshopScenario scenario = BookshopScenario.seeded(demo.seed, Instant.parse("2027-03-01T00:00:00Z"));
            try (KafkaProducer<String, String> producer = producer(servers)) {
                for (int h = 1; h <= demo.hours && !Thread.currentThread().isInterrupted(); h++) {
                    List<Snapshot> snaps = scenario.tick();
                    for (Snapshot s : snaps) {
                        producer.send(new ProducerRecord<>("stopline.counts", s.experiment(), SnapshotWriter.toJson(s)));
                    }
                    producer.flush();
                    if (h % 12 == 0) {
                        out.printf("  ... simulated hour %d fed%n", h);
                    }
                    Thread.sleep(demo.pace.toMillis());
                }
            }
            Thread.sleep(3000);
            out.printf("Scenario fed: %d alerts so far. Browse http://localhost:%d/ ; %s%n", printed.get(),
                    demo.serve.port, demo.exitWhenDone ? "stopping." : "press Ctrl-C to stop.");
            if (!demo.exitWhenDone) {
                Quarkus.waitForExit();
            }
            return 0;
        }

        private static KafkaProducer<String, String> producer(String servers) {
            Properties p = new Properties();
            p.put("bootstrap.servers", servers);
            p.put("key.serializer", StringSerializer.class.getName());
            p.put("value.serializer", StringSerializer.class.getName());
            p.put("acks", "all");
            p.put("linger.ms", "5");
            return new KafkaProducer<>(p);
        }

        private static void printAlerts(String servers, PrintStream out, AtomicInteger printed) {
            Properties p = new Properties();
            p.put("bootstrap.servers", servers);
            p.put("group.id", "stopline-demo-" + UUID.randomUUID());
            p.put("auto.offset.reset", "earliest");
            p.put("key.deserializer", StringDeserializer.class.getName());
            p.put("value.deserializer", StringDeserializer.class.getName());
            ObjectMapper json = new ObjectMapper();
            try (KafkaConsumer<String, String> consumer = new KafkaConsumer<>(p)) {
                consumer.subscribe(List.of("stopline.alerts"));
                while (!Thread.currentThread().isInterrupted()) {
                    for (ConsumerRecord<String, String> r : consumer.poll(Duration.ofMillis(500))) {
                        JsonNode e = json.readTree(r.value());
                        out.printf("%nALERT [%s] %s%n", e.path("type").asText().replace("dev.stopline.alert.", ""),
                                e.path("data").path("summary").asText());
                        printed.incrementAndGet();
                    }
                }
            } catch (IOException e) {
                throw new UncheckedIOException(e);
            } catch (org.apache.kafka.common.errors.InterruptException e) {
                Thread.currentThread().interrupt();
            }
        }
    }

    private static void deleteRecursively(Path dir) {
        if (!Files.exists(dir)) {
            return;
        }
        try (Stream<Path> paths = Files.walk(dir)) {
            for (Path p : paths.sorted(Comparator.reverseOrder()).toList()) {
                Files.delete(p);
            }
        } catch (IOException e) {
            throw new UncheckedIOException("cannot clear demo data " + dir + ": " + e.getMessage(), e);
        }
    }
}
