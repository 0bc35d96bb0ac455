package dev.stopline.service.broker;

import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.PrintStream;
import java.io.UncheckedIOException;
import java.io.Writer;
import java.nio.channels.FileChannel;
import java.nio.channels.FileLock;
import java.nio.channels.OverlappingFileLockException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardOpenOption;
import java.time.Duration;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Properties;
import java.util.Set;
import java.util.concurrent.ExecutionException;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.TimeoutException;
import java.util.logging.Level;

import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.admin.AdminClientConfig;
import org.apache.kafka.clients.admin.NewPartitions;
import org.apache.kafka.clients.admin.NewTopic;
import org.apache.kafka.clients.admin.TopicDescription;
import org.apache.kafka.common.Uuid;
import org.apache.kafka.common.utils.Time;
import org.jboss.logging.Logger;

import kafka.server.KafkaConfig;
import kafka.server.KafkaRaftServer;
import kafka.tools.StorageTool;

/**
 * A real single-node Apache Kafka broker (KRaft, combined broker + controller) running inside this JVM.
 *
 * <p>Lifecycle: {@link #start()} formats the data directory the first time (Kafka's own
 * {@code kafka-storage format}, here {@link StorageTool#execute}), starts {@link KafkaRaftServer} and returns
 * once an admin client sees the broker in {@code describeCluster}; then it creates the named topics with
 * their partition counts. {@link #close()} is bounded: the server's shutdown runs on its own thread and is
 * abandoned, with a warning, after {@link Builder#closeTimeout(Duration)}. A closed instance may be started
 * again; it reuses the formatted directory, so records written before the restart are still there.
 *
 * <p>Design notes.
 * <ul>
 *   <li>The quorum is static ({@code controller.quorum.voters=1@host:controllerPort}, KRaft version 0), not
 *   the dynamic quorum of {@code --standalone}: a dynamic quorum stores the controller's endpoint in the
 *   metadata log, so a restart on a different controller port (tests pick free ports each time) would not
 *   find its own voter. A static voter set lives only in the configuration.</li>
 *   <li>Topics the daemon did not name are auto-created with {@code num.partitions} (default 1),
 *   replication factor 1. The internal topics ({@code __consumer_offsets}, transactions, share groups) get
 *   replication 1 and one partition, so the first consumer group does not wait for 50 partitions.</li>
 *   <li>The data directory is locked ({@value #LOCK_FILE}) before Kafka touches it. Kafka's own
 *   {@code .lock} is taken by the broker's log manager only after the KRaft controller has opened the
 *   metadata log in the same directory: a second instance on a directory in use was seen (test
 *   {@code secondBroker_onADataDirInUse_failsClearly_andTheFirstKeepsRunning}, before this lock) to read a
 *   half-written metadata segment, report corruption and call {@code Exit.halt}.</li>
 *   <li>Kafka's shutdown calls {@code Exit.halt} from some fault handlers; this class does not trap that
 *   globally (a real broker would stop the process too). Tests trap it (see the test helper).</li>
 *   <li>Logging: Kafka logs through SLF4J, which in this application is bound to JBoss LogManager (no
 *   log4j binding; log4j-core is on the class path only because kafka-server depends on it).
 *   {@link #start()} calls {@link #quietBrokerLogging()} (unless {@link Builder#quietLogs(boolean)} is
 *   false), which sets the broker-side categories to WARNING where nobody configured a level, so an
 *   explicit {@code quarkus.log.category} setting still wins.</li>
 * </ul>
 */
public final class EmbeddedKafka implements AutoCloseable {
    private static final Logger LOG = Logger.getLogger(EmbeddedKafka.class);

    /** Our lock file inside the data directory (Kafka ignores plain files there). */
    public static final String LOCK_FILE = "stopline.lock";
    /** Broker-side logger categories; Kafka clients ({@code org.apache.kafka.clients}) are left alone. */
    private static final List<String> BROKER_CATEGORIES = List.of(
            "kafka", "state.change.logger", "org.apache.kafka.server", "org.apache.kafka.controller",
            "org.apache.kafka.raft", "org.apache.kafka.metadata", "org.apache.kafka.image",
            "org.apache.kafka.storage", "org.apache.kafka.coordinator", "org.apache.kafka.queue",
            "org.apache.kafka.snapshot", "org.apache.kafka.security", "org.apache.kafka.network",
            "org.apache.kafka.common.network", "org.apache.kafka.common.security",
            "org.apache.kafka.common.metrics", "org.apache.kafka.common.utils.AppInfoParser",
            "org.apache.kafka.common.config.AbstractConfig");
    /** Held so the JUL loggers (and the levels set on them) are not garbage collected. */
    private static final List<java.util.logging.Logger> QUIETED = new ArrayList<>();

    private final Builder config;
    private final Object lock = new Object();
    private KafkaRaftServer server;
    private FileLock dirLock;

    private EmbeddedKafka(Builder config) {
        this.config = config;
    }

    /** A builder with the daemon's defaults: port 9092, controller port 9093, data dir {@code ./data/kafka}. */
    public static Builder builder() {
        return new Builder();
    }

    /**
     * Formats the data directory if it holds no {@code meta.properties}, starts the broker and waits (bounded
     * by {@link Builder#startTimeout(Duration)}) until it answers {@code describeCluster}; then makes sure
     * every named topic exists with at least its configured partition count.
     *
     * @return this, started
     * @throws IllegalStateException if already running, or if the broker did not come up in time or failed
     *     to start (e.g. a port in use: the message ends with the root cause); the half-started broker has
     *     then been shut down (bounded), so {@code start()} may be called again
     */
    public EmbeddedKafka start() {
        synchronized (lock) {
            if (server != null) {
                throw new IllegalStateException("embedded Kafka already running on " + bootstrapServers());
            }
            if (config.quietLogs) {
                quietBrokerLogging();
            }
            long deadline = System.nanoTime() + config.startTimeout.toNanos();
            Map<String, String> props = brokerProperties();
            lockDataDir();
            try {
                formatIfNeeded(props);
                KafkaRaftServer s = new KafkaRaftServer(new KafkaConfig(props, false), Time.SYSTEM);
                server = s;
                s.startup();
                awaitReadyAndCreateTopics(deadline);
            } catch (RuntimeException e) {
                String why = rootMessage(e);
                LOG.warnf("embedded Kafka failed to start on %s (%s); shutting it down", bootstrapServers(), why);
                if (server != null) {
                    boundedShutdown();
                } else {
                    unlockDataDir();
                }
                throw new IllegalStateException("embedded Kafka failed to start on " + bootstrapServers()
                        + " (controller port " + config.controllerPort + ", data " + config.dataDir + "): " + why, e);
            }
            LOG.infof("embedded Kafka ready on %s, data in %s", bootstrapServers(), config.dataDir);
            return this;
        }
    }

    /** {@code host:port} of the PLAINTEXT listener, for {@code bootstrap.servers}. */
    public String bootstrapServers() {
        return config.host + ":" + config.port;
    }

    /** The log directory (holds {@code meta.properties} once formatted). */
    public Path dataDir() {
        return config.dataDir;
    }

    /** Whether {@link #start()} succeeded and {@link #close()} has not been called since. */
    public boolean isRunning() {
        synchronized (lock) {
            return server != null;
        }
    }

    /**
     * Stops the broker, waiting at most {@link Builder#closeTimeout(Duration)}. If Kafka's shutdown has not
     * finished by then it is abandoned on its (daemon) thread and a warning says so; the data directory
     * lock may then still be held until the process exits. Idempotent.
     */
    @Override
    public void close() {
        synchronized (lock) {
            if (server != null) {
                boundedShutdown();
            }
        }
    }

    private void boundedShutdown() {
        KafkaRaftServer s = server;
        server = null;
        long t0 = System.nanoTime();
        boolean done = BoundedShutdown.run("kafka-" + config.port, () -> {
            s.shutdown();
            s.awaitShutdown();
        }, config.closeTimeout);
        long ms = TimeUnit.NANOSECONDS.toMillis(System.nanoTime() - t0);
        if (done) {
            unlockDataDir();
            LOG.infof("embedded Kafka on %s stopped in %d ms", bootstrapServers(), ms);
        } else {
            // the lock stays held: the abandoned broker may still write to the directory
            LOG.warnf("embedded Kafka on %s abandoned after %d ms: broker threads and the lock on %s may linger"
                    + " until the JVM exits, so a restart on that directory in this JVM may fail",
                    bootstrapServers(), ms, config.dataDir);
        }
    }

    /** The broker configuration; visible for tests and for the daemon's diagnostics. */
    Map<String, String> brokerProperties() {
        String host = config.host;
        Map<String, String> p = new LinkedHashMap<>();
        p.put("process.roles", "broker,controller");
        p.put("node.id", "1");
        p.put("controller.quorum.voters", "1@" + host + ":" + config.controllerPort);
        p.put("listeners", "PLAINTEXT://" + host + ":" + config.port + ",CONTROLLER://" + host + ":"
                + config.controllerPort);
        p.put("advertised.listeners", "PLAINTEXT://" + host + ":" + config.port);
        p.put("controller.listener.names", "CONTROLLER");
        p.put("inter.broker.listener.name", "PLAINTEXT");
        p.put("listener.security.protocol.map", "PLAINTEXT:PLAINTEXT,CONTROLLER:PLAINTEXT");
        p.put("log.dirs", config.dataDir.toAbsolutePath().toString());
        p.put("auto.create.topics.enable", "true");
        p.put("num.partitions", Integer.toString(config.defaultPartitions));
        p.put("default.replication.factor", "1");
        p.put("min.insync.replicas", "1");
        p.put("offsets.topic.replication.factor", "1");
        p.put("offsets.topic.num.partitions", "1");
        p.put("transaction.state.log.replication.factor", "1");
        p.put("transaction.state.log.min.isr", "1");
        p.put("transaction.state.log.num.partitions", "1");
        p.put("share.coordinator.state.topic.replication.factor", "1");
        p.put("share.coordinator.state.topic.min.isr", "1");
        p.put("group.initial.rebalance.delay.ms", "0");
        // Kafka's own bound on waiting for metadata catch-up in startup() (default: forever)
        p.put("server.max.startup.time.ms", Long.toString(config.startTimeout.toMillis()));
        p.putAll(config.overrides);
        return p;
    }

    private void lockDataDir() {
        Path dir = config.dataDir.toAbsolutePath();
        Path file = dir.resolve(LOCK_FILE);
        FileChannel ch = null;
        try {
            Files.createDirectories(dir);
            ch = FileChannel.open(file, StandardOpenOption.CREATE, StandardOpenOption.WRITE);
            FileLock l = ch.tryLock();
            if (l == null) {
                throw new IllegalStateException("Kafka data dir " + dir + " is in use by another process (lock "
                        + file + " held)");
            }
            dirLock = l;
        } catch (OverlappingFileLockException e) {
            closeQuietly(ch);
            throw new IllegalStateException("Kafka data dir " + dir + " is in use by another embedded Kafka in"
                    + " this JVM (lock " + file + " held)", e);
        } catch (IOException e) {
            closeQuietly(ch);
            throw new UncheckedIOException("cannot lock Kafka data dir " + dir, e);
        } catch (IllegalStateException e) {
            closeQuietly(ch);
            throw e;
        }
    }

    private void unlockDataDir() {
        FileLock l = dirLock;
        dirLock = null;
        if (l != null) {
            try {
                l.release();
            } catch (IOException e) {
                LOG.debugf("releasing %s: %s", LOCK_FILE, e);
            }
            closeQuietly(l.channel());
        }
    }

    private static void closeQuietly(FileChannel ch) {
        if (ch != null) {
            try {
                ch.close();
            } catch (IOException e) {
                LOG.debugf("closing lock channel: %s", e);
            }
        }
    }

    private void formatIfNeeded(Map<String, String> props) {
        Path dir = config.dataDir.toAbsolutePath();
        if (Files.exists(dir.resolve("meta.properties"))) {
            return;
        }
        Path file = null;
        try {
            Files.createDirectories(dir);
            file = Files.createTempFile("stopline-kafka-", ".properties");
            Properties p = new Properties();
            p.putAll(props);
            try (Writer w = Files.newBufferedWriter(file, StandardCharsets.UTF_8)) {
                p.store(w, "stopline embedded Kafka (format only)");
            }
            ByteArrayOutputStream out = new ByteArrayOutputStream();
            String clusterId = Uuid.randomUuid().toString();
            int rc;
            try (PrintStream ps = new PrintStream(out, true, StandardCharsets.UTF_8)) {
                rc = StorageTool.execute(new String[] {"format", "-t", clusterId, "-c", file.toString(),
                        "--ignore-formatted"}, ps);
            }
            String text = out.toString(StandardCharsets.UTF_8).trim();
            if (rc != 0) {
                throw new IllegalStateException("kafka storage format of " + dir + " exited " + rc + ": " + text);
            }
            LOG.debugf("formatted %s as cluster %s: %s", dir, clusterId, text);
        } catch (IOException e) {
            throw new UncheckedIOException("cannot prepare Kafka data dir " + dir, e);
        } finally {
            if (file != null) {
                try {
                    Files.deleteIfExists(file);
                } catch (IOException e) {
                    LOG.debugf("could not delete %s: %s", file, e);
                }
            }
        }
    }

    private void awaitReadyAndCreateTopics(long deadline) {
        Map<String, Object> adminProps = Map.of(
                AdminClientConfig.BOOTSTRAP_SERVERS_CONFIG, bootstrapServers(),
                AdminClientConfig.REQUEST_TIMEOUT_MS_CONFIG, 5_000,
                AdminClientConfig.DEFAULT_API_TIMEOUT_MS_CONFIG, 10_000);
        try (Admin admin = Admin.create(adminProps)) {
            awaitBroker(admin, deadline);
            ensureTopics(admin, deadline);
        }
    }

    private void awaitBroker(Admin admin, long deadline) {
        Exception last = null;
        while (System.nanoTime() < deadline) {
            try {
                if (!admin.describeCluster().nodes().get(remainingMs(deadline), TimeUnit.MILLISECONDS).isEmpty()) {
                    return;
                }
            } catch (ExecutionException | TimeoutException e) {
                last = e;
            } catch (InterruptedException e) {
                Thread.currentThread().interrupt();
                throw new IllegalStateException("interrupted while waiting for embedded Kafka", e);
            }
            sleepQuietly(100);
        }
        throw new IllegalStateException("embedded Kafka on " + bootstrapServers() + " not ready within "
                + config.startTimeout, last);
    }

    private void ensureTopics(Admin admin, long deadline) {
        if (config.topicPartitions.isEmpty()) {
            return;
        }
        try {
            Set<String> existing = admin.listTopics().names().get(remainingMs(deadline), TimeUnit.MILLISECONDS);
            List<NewTopic> create = new ArrayList<>();
            Map<String, Integer> grow = new LinkedHashMap<>();
            for (Map.Entry<String, Integer> e : config.topicPartitions.entrySet()) {
                if (!existing.contains(e.getKey())) {
                    create.add(new NewTopic(e.getKey(), e.getValue(), (short) 1));
                } else {
                    grow.put(e.getKey(), e.getValue());
                }
            }
            if (!create.isEmpty()) {
                admin.createTopics(create).all().get(remainingMs(deadline), TimeUnit.MILLISECONDS);
            }
            growPartitions(admin, grow, deadline);
        } catch (ExecutionException | TimeoutException e) {
            throw new IllegalStateException("cannot create topics " + config.topicPartitions.keySet(), e);
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            throw new IllegalStateException("interrupted while creating topics", e);
        }
    }

    /** Kafka can add partitions but never remove them; a smaller configured count is only logged. */
    private void growPartitions(Admin admin, Map<String, Integer> wanted, long deadline)
            throws InterruptedException, ExecutionException, TimeoutException {
        if (wanted.isEmpty()) {
            return;
        }
        Map<String, TopicDescription> found = admin.describeTopics(wanted.keySet()).allTopicNames()
                .get(remainingMs(deadline), TimeUnit.MILLISECONDS);
        Map<String, NewPartitions> increase = new LinkedHashMap<>();
        wanted.forEach((topic, n) -> {
            int have = found.get(topic).partitions().size();
            if (have < n) {
                increase.put(topic, NewPartitions.increaseTo(n));
            } else if (have > n) {
                LOG.warnf("topic %s has %d partitions, configured %d; Kafka cannot remove partitions", topic, have,
                        n);
            }
        });
        if (!increase.isEmpty()) {
            admin.createPartitions(increase).all().get(remainingMs(deadline), TimeUnit.MILLISECONDS);
        }
    }

    /**
     * Sets the broker-side logger categories (Kafka's core, controller, raft, storage, coordinators) to
     * WARNING, except those that already have a level configured. Clients' categories are not touched,
     * except that {@code org.apache.kafka.common.config.AbstractConfig}, which prints every broker's and
     * client's full configuration at INFO (hundreds of lines), is shared by both and so is quieted too.
     */
    public static void quietBrokerLogging() {
        synchronized (QUIETED) {
            for (String name : BROKER_CATEGORIES) {
                java.util.logging.Logger l = java.util.logging.Logger.getLogger(name);
                if (l.getLevel() == null) {
                    l.setLevel(Level.WARNING);
                    QUIETED.add(l);
                }
            }
        }
    }

    private static String rootMessage(Throwable e) {
        Throwable t = e;
        while (t.getCause() != null && t.getCause() != t) {
            t = t.getCause();
        }
        return t.getClass().getSimpleName() + ": " + t.getMessage();
    }

    private static long remainingMs(long deadline) {
        return Math.max(1, TimeUnit.NANOSECONDS.toMillis(deadline - System.nanoTime()));
    }

    private static void sleepQuietly(long ms) {
        try {
            Thread.sleep(ms);
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
        }
    }

    /** Options; every setter validates its argument and returns this builder. */
    public static final class Builder {
        private String host = "127.0.0.1";
        private int port = 9092;
        private int controllerPort = 9093;
        private Path dataDir = Path.of("data", "kafka");
        private int defaultPartitions = 1;
        private final Map<String, Integer> topicPartitions = new LinkedHashMap<>();
        private final Map<String, String> overrides = new LinkedHashMap<>();
        private Duration startTimeout = Duration.ofSeconds(60);
        private Duration closeTimeout = Duration.ofSeconds(8);
        private boolean quietLogs = true;

        private Builder() {
        }

        /** Interface to bind and advertise; default {@code 127.0.0.1}. */
        public Builder host(String host) {
            if (host == null || host.isBlank()) {
                throw new IllegalArgumentException("host must not be blank");
            }
            this.host = host;
            return this;
        }

        /** PLAINTEXT (client) port, in [1, 65535]; default 9092. */
        public Builder port(int port) {
            this.port = checkPort("port", port);
            return this;
        }

        /** KRaft controller port, in [1, 65535]; default 9093. */
        public Builder controllerPort(int port) {
            this.controllerPort = checkPort("controller port", port);
            return this;
        }

        /** Log directory; default {@code ./data/kafka}. */
        public Builder dataDir(Path dir) {
            if (dir == null) {
                throw new IllegalArgumentException("data dir must not be null");
            }
            this.dataDir = dir;
            return this;
        }

        /** Partitions of auto-created topics ({@code num.partitions}), at least 1; default 1. */
        public Builder defaultPartitions(int n) {
            this.defaultPartitions = checkPartitions("default partitions", n);
            return this;
        }

        /** Creates {@code topic} at start with {@code n >= 1} partitions (grown if it exists with fewer). */
        public Builder topic(String topic, int n) {
            if (topic == null || topic.isBlank()) {
                throw new IllegalArgumentException("topic name must not be blank");
            }
            topicPartitions.put(topic, checkPartitions("partitions of " + topic, n));
            return this;
        }

        /** Any broker property, applied last (overrides the defaults above). */
        public Builder brokerProperty(String key, String value) {
            overrides.put(key, value);
            return this;
        }

        /** Longest wait in {@link EmbeddedKafka#start()}; positive; default 60 s. */
        public Builder startTimeout(Duration d) {
            this.startTimeout = checkPositive("start timeout", d);
            return this;
        }

        /** Longest wait in {@link EmbeddedKafka#close()}; positive; default 8 s. */
        public Builder closeTimeout(Duration d) {
            this.closeTimeout = checkPositive("close timeout", d);
            return this;
        }

        /**
         * Whether {@link EmbeddedKafka#start()} calls {@link EmbeddedKafka#quietBrokerLogging()} (default
         * true; categories with a configured level are left alone either way).
         */
        public Builder quietLogs(boolean quiet) {
            this.quietLogs = quiet;
            return this;
        }

        /** A broker with these options, not yet started (the builder is copied). */
        public EmbeddedKafka build() {
            if (port == controllerPort) {
                throw new IllegalArgumentException("port and controller port must differ, both " + port);
            }
            Builder copy = new Builder();
            copy.host = host;
            copy.port = port;
            copy.controllerPort = controllerPort;
            copy.dataDir = dataDir;
            copy.defaultPartitions = defaultPartitions;
            copy.topicPartitions.putAll(topicPartitions);
            copy.overrides.putAll(overrides);
            copy.startTimeout = startTimeout;
            copy.closeTimeout = closeTimeout;
            copy.quietLogs = quietLogs;
            return new EmbeddedKafka(copy);
        }

        private static int checkPort(String name, int port) {
            if (port >= 1 && port <= 65535) {
                return port;
            }
            throw new IllegalArgumentException(name + " " + port + " not in [1, 65535]");
        }

        private static int checkPartitions(String name, int n) {
            if (n >= 1) {
                return n;
            }
            throw new IllegalArgumentException(name + " " + n + " must be >= 1");
        }

        private static Duration checkPositive(String name, Duration d) {
            if (d != null && !d.isNegative() && !d.isZero()) {
                return d;
            }
            throw new IllegalArgumentException(name + " " + d + " must be > 0");
        }
    }
}
