package dev.stopline.testing;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.DriverManager;
import java.sql.SQLException;
import java.sql.Statement;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.extension.AfterAllCallback;
import org.junit.jupiter.api.extension.BeforeAllCallback;
import org.junit.jupiter.api.extension.ExtensionContext;

/**
 * A private PostgreSQL 15 cluster for one test class: Debian's binaries ({@code initdb}, {@code pg_ctl}
 * under {@value #BIN}), a fresh data directory in a temporary directory owned by {@code postgres}, trust
 * authentication, a free loopback port, its Unix socket in the same temporary directory (so it never
 * touches {@code /var/run/postgresql} or a system cluster), and one database, {@value #DATABASE}.
 * Stopped ({@code -m immediate}, bounded) and deleted after the class. Start-up takes about 2 s. A test of a
 * database outage can {@link #halt()} it and {@link #startAgain()} on the same data directory and port.
 *
 * <p>PostgreSQL refuses to run as root, so when the tests run as root every command is run as the
 * {@code postgres} user through {@code runuser}; as any other user the commands run directly.
 *
 * <pre>
 * &#64;RegisterExtension
 * static final PostgresCluster PG = new PostgresCluster();
 * ... PG.jdbcUrl() ...
 * </pre>
 *
 * If the binaries are missing the class fails, naming the package to install: a store nobody ran on
 * PostgreSQL is not a tested store.
 */
public final class PostgresCluster implements BeforeAllCallback, AfterAllCallback {
    public static final String BIN = "/usr/lib/postgresql/15/bin";
    public static final String DATABASE = "stopline_test";
    private static final String SUPERUSER = "postgres";
    private static final Duration COMMAND_TIMEOUT = Duration.ofSeconds(60);

    private final Path bin;
    private Path dir;
    private int port;

    /** A cluster from Debian's PostgreSQL 15 binaries in {@value #BIN}. */
    public PostgresCluster() {
        this(Path.of(BIN));
    }

    /** A cluster from the binaries in {@code bin} (another PostgreSQL version, or a test of the failure). */
    public PostgresCluster(Path bin) {
        this.bin = bin;
    }

    @Override
    public void beforeAll(ExtensionContext context) {
        start();
    }

    @Override
    public void afterAll(ExtensionContext context) {
        stop();
    }

    /** Creates, starts and prepares the cluster; fails with a clear message if it cannot. */
    public void start() {
        for (String tool : List.of("initdb", "pg_ctl")) {
            if (!Files.isExecutable(bin.resolve(tool))) {
                throw new IllegalStateException("PostgreSQL 15 is needed by this test and " + bin.resolve(tool)
                        + " is missing: install Debian's postgresql-15 package (apt-get install postgresql-15)");
            }
        }
        try {
            dir = Files.createTempDirectory("stopline-pg-");
            if (runsAsRoot()) {
                run(List.of("chown", SUPERUSER + ":", dir.toString()), false);
            }
            port = FreePorts.pick();
            run(List.of(bin.resolve("initdb").toString(), "-D", data().toString(), "-A", "trust", "-U", SUPERUSER, "-E", "UTF8",
                    "--locale=C", "--no-sync"), true);
            startServer();
            try (Connection c = DriverManager.getConnection(url("postgres"), SUPERUSER, "");
                 Statement s = c.createStatement()) {
                s.execute("CREATE DATABASE " + DATABASE);
            }
        } catch (IOException e) {
            stop();
            throw new UncheckedIOException("cannot start the PostgreSQL test cluster in " + dir, e);
        } catch (SQLException | RuntimeException e) {
            String log = serverLog();
            stop();
            throw new IllegalStateException("cannot start the PostgreSQL test cluster: " + e.getMessage()
                    + (log.isEmpty() ? "" : "\nserver log:\n" + log), e);
        }
    }

    /** pg_ctl start on the cluster's data directory, port and socket directory; waits until it accepts connections. */
    private void startServer() throws IOException {
        // fsync off: a test cluster is thrown away, durability across power loss is not under test here
        run(List.of(bin.resolve("pg_ctl").toString(), "-D", data().toString(), "-l", dir.resolve("server.log").toString(),
                "-o", "-p " + port + " -k " + dir + " -c listen_addresses=127.0.0.1 -c fsync=off",
                "-w", "-t", "30", "start"), true);
    }

    /**
     * An outage: stops the server as a crash would ({@code -m immediate}: every connection is cut, no
     * checkpoint) but keeps its data directory, so that {@link #startAgain()} brings the same database back
     * on the same port.
     */
    public void halt() {
        if (dir == null) {
            throw new IllegalStateException("the cluster is not running");
        }
        try {
            run(List.of(bin.resolve("pg_ctl").toString(), "-D", data().toString(), "-m", "immediate", "-w", "-t", "10",
                    "stop"), true);
        } catch (IOException e) {
            throw new UncheckedIOException("cannot stop the PostgreSQL test cluster", e);
        }
    }

    /** Starts the server again after {@link #halt()}: same data directory, port and socket (crash recovery runs). */
    public void startAgain() {
        if (dir == null) {
            throw new IllegalStateException("the cluster was deleted; use start()");
        }
        try {
            startServer();
        } catch (IOException | RuntimeException e) {
            throw new IllegalStateException("cannot start the PostgreSQL test cluster again: " + e.getMessage()
                    + "\nserver log:\n" + serverLog(), e);
        }
    }

    /** The JDBC URL of the test database (user {@code postgres}, no password: trust authentication). */
    public String jdbcUrl() {
        return url(DATABASE);
    }

    public String user() {
        return SUPERUSER;
    }

    public int port() {
        return port;
    }

    /** Stops the server (immediate, bounded) and deletes its directory; safe to call twice. */
    public void stop() {
        if (dir == null) {
            return;
        }
        try {
            if (Files.exists(data().resolve("postmaster.pid"))) {
                run(List.of(bin.resolve("pg_ctl").toString(), "-D", data().toString(), "-m", "immediate", "-w", "-t", "10", "stop"),
                        true);
            }
        } catch (IOException | RuntimeException e) {
            // still delete what we can; a stray server would die with its deleted data directory's lock file
        } finally {
            KafkaBrokerExtension.deleteTree(dir);
            dir = null;
        }
    }

    private String url(String database) {
        return "jdbc:postgresql://127.0.0.1:" + port + "/" + database;
    }

    private Path data() {
        return dir.resolve("data");
    }

    private String serverLog() {
        try {
            Path log = dir == null ? null : dir.resolve("server.log");
            return log != null && Files.exists(log) ? Files.readString(log, StandardCharsets.UTF_8) : "";
        } catch (IOException e) {
            return "";
        }
    }

    private static boolean runsAsRoot() {
        return "root".equals(System.getProperty("user.name"));
    }

    /** Runs a command (as postgres when we are root and {@code asPostgres}), bounded; fails on a non-zero exit. */
    private void run(List<String> command, boolean asPostgres) throws IOException {
        List<String> cmd = new ArrayList<>();
        if (asPostgres && runsAsRoot()) {
            cmd.addAll(List.of("runuser", "-u", SUPERUSER, "--"));
        }
        cmd.addAll(command);
        Path out = Files.createTempFile("stopline-pg-cmd-", ".log");
        try {
            Process p = new ProcessBuilder(cmd).redirectErrorStream(true).redirectOutput(out.toFile())
                    .directory(dir.toFile()).start();
            if (!p.waitFor(COMMAND_TIMEOUT.toSeconds(), TimeUnit.SECONDS)) {
                p.destroyForcibly();
                throw new IllegalStateException(String.join(" ", cmd) + " did not finish within " + COMMAND_TIMEOUT);
            }
            if (p.exitValue() != 0) {
                throw new IllegalStateException(String.join(" ", cmd) + " exited with " + p.exitValue() + ": "
                        + Files.readString(out, StandardCharsets.UTF_8).strip());
            }
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            throw new IllegalStateException("interrupted while running " + cmd.get(0), e);
        } finally {
            Files.deleteIfExists(out);
        }
    }
}
