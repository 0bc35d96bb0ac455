package dev.stopline.cli;

import dev.stopline.service.broker.EmbeddedKafka;
import io.quarkus.runtime.Quarkus;
import io.quarkus.runtime.QuarkusApplication;
import java.nio.file.Path;
import picocli.CommandLine.Option;

/**
 * Where the daemon finds Kafka, its database and its plans, shared by {@code serve} and {@code demo}.
 *
 * <p>With no Kafka address (no {@code --bootstrap-servers}, no {@code KAFKA_BOOTSTRAP_SERVERS}, no
 * {@code kafka.bootstrap.servers} property) a real single-node KRaft broker is started in-process on
 * {@code localhost:9092} with its data under {@code <data-dir>/kafka}, and stopped (bounded) after the
 * daemon has shut down. The database is the H2 file under {@code <data-dir>/db} unless a JDBC URL is given.
 */
public final class DaemonOptions {
    @Option(names = "--bootstrap-servers", paramLabel = "HOST:PORT[,...]",
            description = "Kafka cluster to use; without it (and without KAFKA_BOOTSTRAP_SERVERS) an embedded "
                    + "broker is started.")
    String bootstrapServers;

    @Option(names = "--jdbc-url", paramLabel = "URL",
            description = "Database, e.g. jdbc:postgresql://db:5432/stopline (default: H2 file under the data dir; "
                    + "also STOPLINE_DB_URL).")
    String jdbcUrl;

    @Option(names = "--data-dir", paramLabel = "DIR", defaultValue = "data",
            description = "Where the embedded broker and database keep their files (default: ${DEFAULT-VALUE}).")
    Path dataDir;

    @Option(names = "--plans-dir", paramLabel = "DIR", defaultValue = "config/plans",
            description = "Stopping plans registered at start (default: ${DEFAULT-VALUE}).")
    Path plansDir;

    @Option(names = "--port", paramLabel = "PORT", defaultValue = "8080",
            description = "HTTP port of the API and status page (default: ${DEFAULT-VALUE}).")
    int port;

    @Option(names = "--kafka-port", paramLabel = "PORT", defaultValue = "9092",
            description = "Port of the embedded broker (default: ${DEFAULT-VALUE}).")
    int kafkaPort;

    /** Starts the embedded broker if needed, then Quarkus with {@code app}; returns its exit code. */
    int launch(Class<? extends QuarkusApplication> app, Path dataDir) {
        EmbeddedKafka broker = null;
        String servers = firstNonBlank(bootstrapServers, System.getProperty("kafka.bootstrap.servers"),
                System.getenv("KAFKA_BOOTSTRAP_SERVERS"));
        if (servers == null) {
            EmbeddedKafka.quietBrokerLogging();
            broker = EmbeddedKafka.builder().host("localhost").port(kafkaPort).controllerPort(kafkaPort + 1)
                    .dataDir(dataDir.resolve("kafka"))
                    .topic("stopline.counts", 1).topic("stopline.counts.dlq", 1).topic("stopline.alerts", 1).closeTimeout(java.time.Duration.ofSeconds(5)).build().start();
            servers = broker.bootstrapServers();
        }
        System.setProperty("kafka.bootstrap.servers", servers);
        String url = firstNonBlank(jdbcUrl, System.getProperty("stopline.db.url"), System.getenv("STOPLINE_DB_URL"));
        if (url == null) {
            url = "jdbc:h2:file:" + dataDir.resolve("db").resolve("stopline").toAbsolutePath()
                    + ";DB_CLOSE_ON_EXIT=FALSE";
        }
        System.setProperty("stopline.db.url", url);
        System.setProperty("stopline.plans-dir", plansDir.toString());
        System.setProperty("stopline.data-dir", dataDir.toString());
        System.setProperty("quarkus.http.port", Integer.toString(port));
        BrokerStopper stopper = new BrokerStopper(broker);
        Runtime.getRuntime().addShutdownHook(new Thread(stopper::afterDaemon, "stopline-broker-stop"));
        int[] exit = {0};
        try {
            Quarkus.run(app, (code, failure) -> {
                exit[0] = code;
                if (failure != null) {
                    System.err.println("stopline: the daemon failed: " + failure.getMessage());
                }
            });
        } finally {
            stopper.daemonStopped();
            stopper.stopOnce();
        }
        return exit[0];
    }

    /**
     * Stops the embedded broker only after the daemon (its consumers and producers) has stopped, also
     * when the JVM is shutting down on SIGTERM: shutdown hooks run concurrently with the main thread,
     * so the hook waits for the main thread's signal that Quarkus has returned, then closes the broker
     * (itself bounded), all within the 10 s a supervisor usually grants.
     */
    static final class BrokerStopper {
        private final EmbeddedKafka broker;
        private final java.util.concurrent.CountDownLatch daemonDone = new java.util.concurrent.CountDownLatch(1);
        private final java.util.concurrent.atomic.AtomicBoolean stopped = new java.util.concurrent.atomic.AtomicBoolean();

        BrokerStopper(EmbeddedKafka broker) {
            this.broker = broker;
        }

        void daemonStopped() {
            daemonDone.countDown();
        }

        void afterDaemon() {
            try {
                daemonDone.await(4, java.util.concurrent.TimeUnit.SECONDS);
            } catch (InterruptedException e) {
                Thread.currentThread().interrupt();
            }
            stopOnce();
        }

        void stopOnce() {
            if (broker != null && stopped.compareAndSet(false, true)) {
                broker.close();
            }
        }
    }

    private static String firstNonBlank(String... values) {
        for (String v : values) {
            if (v != null && !v.isBlank()) {
                return v.strip();
            }
        }
        return null;
    }

}
