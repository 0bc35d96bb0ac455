package dev.stopline.testing;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.Comparator;
import java.util.stream.Stream;

import org.apache.kafka.common.utils.Exit;
import org.jboss.logging.Logger;
import org.junit.jupiter.api.extension.BeforeAllCallback;
import org.junit.jupiter.api.extension.ExtensionContext;
import org.junit.jupiter.api.extension.ParameterContext;
import org.junit.jupiter.api.extension.ParameterResolver;

import dev.stopline.service.broker.EmbeddedKafka;

/**
 * One real embedded Kafka broker shared by every test class of the JVM that uses this extension, on free
 * ports in a temporary directory. Started on first use, closed (and its directory deleted) when the test
 * run ends. Use it as {@code @ExtendWith(KafkaBrokerExtension.class)}, then take an {@link EmbeddedKafka}
 * parameter or call {@link #bootstrapServers()}. Tests share the broker, so each should use its own topic
 * and consumer-group names.
 *
 * <p>Kafka's {@code Exit.exit}/{@code Exit.halt} are replaced by procedures that log and throw, so a fatal
 * fault in the broker fails a test instead of killing the test JVM.
 */
public final class KafkaBrokerExtension implements BeforeAllCallback, ParameterResolver {
    private static final Logger LOG = Logger.getLogger(KafkaBrokerExtension.class);
    private static final Object LOCK = new Object();
    private static EmbeddedKafka broker;
    private static final java.util.concurrent.atomic.AtomicInteger EXITS = new java.util.concurrent.atomic.AtomicInteger();
    private static final java.util.List<java.util.logging.Logger> QUIET_CLIENTS = new java.util.ArrayList<>();

    @Override
    public void beforeAll(ExtensionContext context) {
        EmbeddedKafka b = shared();
        // The root store closes its closeable values once, after all tests of the run (AutoCloseable for
        // JUnit 5.13+, CloseableResource for older; close is idempotent either way).
        context.getRoot().getStore(ExtensionContext.Namespace.GLOBAL)
                .getOrComputeIfAbsent(KafkaBrokerExtension.class.getName(), k -> new Closer(b), Closer.class);
    }

    @Override
    public boolean supportsParameter(ParameterContext p, ExtensionContext e) {
        return p.getParameter().getType() == EmbeddedKafka.class;
    }

    @Override
    public Object resolveParameter(ParameterContext p, ExtensionContext e) {
        return shared();
    }

    /** {@code bootstrap.servers} of the shared broker (starting it if needed). */
    public static String bootstrapServers() {
        return shared().bootstrapServers();
    }

    /** The shared broker, started on first call. */
    public static EmbeddedKafka shared() {
        synchronized (LOCK) {
            if (broker == null) {
                trapExit();
                quietKafkaLogging();
                int[] ports = FreePorts.pickTwo();
                broker = EmbeddedKafka.builder().port(ports[0]).controllerPort(ports[1])
                        .dataDir(tempDir("stopline-kafka-shared-")).build().start();
            }
            return broker;
        }
    }

    /** Makes Kafka's exit and halt throw instead of stopping the test JVM. Idempotent. */
    public static void trapExit() {
        Exit.setExitProcedure((code, msg) -> {
            EXITS.incrementAndGet();
            LOG.errorf("Kafka asked to exit(%d): %s", code, msg);
            throw new IllegalStateException("Kafka exit(" + code + "): " + msg);
        });
        Exit.setHaltProcedure((code, msg) -> {
            EXITS.incrementAndGet();
            LOG.errorf("Kafka asked to halt(%d): %s", code, msg);
            throw new IllegalStateException("Kafka halt(" + code + "): " + msg);
        });
    }

    /**
     * Broker categories (see {@link EmbeddedKafka#quietBrokerLogging()}) and, in tests only, the clients'
     * INFO chatter (one line per producer, consumer and partition assignment) go to WARNING.
     */
    public static void quietKafkaLogging() {
        EmbeddedKafka.quietBrokerLogging();
        synchronized (QUIET_CLIENTS) {
            if (QUIET_CLIENTS.isEmpty()) {
                for (String name : new String[] {"org.apache.kafka.clients", "org.apache.kafka.common.telemetry"}) {
                    java.util.logging.Logger l = java.util.logging.Logger.getLogger(name);
                    l.setLevel(java.util.logging.Level.WARNING);
                    QUIET_CLIENTS.add(l); // strong reference keeps the level
                }
            }
        }
    }

    /** How many times Kafka asked to exit or halt the JVM since the trap was set (a test can assert 0 more). */
    public static int exitRequests() {
        return EXITS.get();
    }

    /** A fresh temporary directory. */
    public static Path tempDir(String prefix) {
        try {
            return Files.createTempDirectory(prefix);
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        }
    }

    /** Deletes a directory tree, best effort. */
    public static void deleteTree(Path dir) {
        if (dir == null || !Files.exists(dir)) {
            return;
        }
        try (Stream<Path> s = Files.walk(dir)) {
            s.sorted(Comparator.reverseOrder()).forEach(p -> p.toFile().delete());
        } catch (IOException e) {
            LOG.debugf("could not delete %s: %s", dir, e);
        }
    }

    private static final class Closer implements ExtensionContext.Store.CloseableResource, AutoCloseable {
        private final EmbeddedKafka b;

        Closer(EmbeddedKafka b) {
            this.b = b;
        }

        @Override
        public void close() {
            synchronized (LOCK) {
                b.close();
                deleteTree(b.dataDir());
                if (broker == b) {
                    broker = null;
                }
            }
        }
    }

    /** Longest a test should wait for a record from the shared broker (common practice for a local broker). */
    public static final Duration RECORD_WAIT = Duration.ofSeconds(20);
}
