package dev.stopline.testing;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;

/**
 * The packaged daemon ({@code quarkus-run.jar serve}) as a separate process, for tests that restart or
 * kill it. Output goes to a log file under the test's directory.
 */
public final class DaemonProcess implements AutoCloseable {
    private static final ObjectMapper JSON = new ObjectMapper();
    private final Process process;
    private final int port;
    private final HttpClient http = HttpClient.newBuilder().connectTimeout(Duration.ofSeconds(2)).build();

    private DaemonProcess(Process process, int port) {
        this.process = process;
        this.port = port;
    }

    /** Starts {@code serve} against a broker and database, and waits until its readiness check answers 200. */
    public static DaemonProcess start(String bootstrapServers, String jdbcUrl, Path plansDir, Path log,
                                      String... extraArgs) {
        List<String> args = new ArrayList<>(List.of("--bootstrap-servers", bootstrapServers, "--jdbc-url", jdbcUrl,
                "--plans-dir", plansDir.toString()));
        args.addAll(List.of(extraArgs));
        return serve(args, log);
    }

    /** Starts {@code serve} with the given options (a free {@code --port} is added) and waits until it is ready. */
    public static DaemonProcess serve(List<String> options, Path log) {
        return serve(List.of("-Xmx512m"), options, log);
    }

    /**
     * Starts {@code serve} in a JVM with the given options (heap size, system properties, a flight
     * recording), a free {@code --port} added, and waits until it is ready.
     */
    public static DaemonProcess serve(List<String> jvmOptions, List<String> options, Path log) {
        String jar = System.getProperty("stopline.jar", "target/quarkus-app/quarkus-run.jar");
        int port = FreePorts.pick();
        List<String> cmd = new ArrayList<>(List.of(Path.of(System.getProperty("java.home"), "bin", "java").toString()));
        cmd.addAll(jvmOptions);
        cmd.addAll(List.of("-jar", jar, "serve", "--port", Integer.toString(port)));
        cmd.addAll(options);
        try {
            Process p = new ProcessBuilder(cmd).redirectErrorStream(true)
                    .redirectOutput(ProcessBuilder.Redirect.appendTo(log.toFile())).start();
            DaemonProcess d = new DaemonProcess(p, port);
            // 180 s unless -Dstopline.daemon.ready-seconds says otherwise (10,000 plans on a busy machine)
            d.awaitReady(Duration.ofSeconds(Long.getLong("stopline.daemon.ready-seconds", 180)));
            return d;
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        }
    }

    private void awaitReady(Duration max) {
        long deadline = System.nanoTime() + max.toNanos();
        while (System.nanoTime() < deadline) {
            if (!process.isAlive()) {
                throw new IllegalStateException("daemon exited with " + process.exitValue() + " before it was ready");
            }
            try {
                if (get("/q/health/ready").statusCode() == 200) {
                    return;
                }
            } catch (IOException e) {
                // not listening yet
            }
            sleep(250);
        }
        throw new IllegalStateException("daemon not ready within " + max);
    }

    public HttpResponse<String> get(String path) throws IOException {
        try {
            return http.send(HttpRequest.newBuilder(URI.create("http://127.0.0.1:" + port + path))
                    .timeout(Duration.ofSeconds(10)).build(), HttpResponse.BodyHandlers.ofString());
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            throw new IOException(e);
        }
    }

    public String getBody(String path) {
        try {
            return get(path).body();
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        }
    }

    /** Waits until the daemon has accepted the experiment's snapshot {@code sequence} (or a later one). */
    public void awaitSequence(String experiment, long sequence, Duration max) {
        long deadline = System.nanoTime() + max.toNanos();
        while (System.nanoTime() < deadline) {
            if (json(getBody("/api/experiments/" + experiment)).path("summary").path("lastSequence").asLong(-1)
                    >= sequence) {
                return;
            }
            sleep(250);
        }
        throw new AssertionError("daemon did not reach sequence " + sequence + " of " + experiment + " within " + max);
    }

    /** Sequences of the stored primary looks of an experiment, oldest first. */
    public List<Long> primaryLookSequences(String experiment) {
        List<Long> out = new ArrayList<>();
        for (JsonNode l : json(getBody("/api/experiments/" + experiment + "/looks"))) {
            if ("primary".equals(l.path("role").asText())) {
                out.add(l.path("sequence").asLong());
            }
        }
        return out;
    }

    /** Ids of the stored alerts of an experiment. */
    public List<String> alertIds(String experiment) {
        List<String> out = new ArrayList<>();
        for (JsonNode a : json(getBody("/api/alerts?experiment=" + experiment))) {
            out.add(a.path("alert").path("id").asText());
        }
        return out;
    }

    private static JsonNode json(String body) {
        try {
            return JSON.readTree(body);
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        }
    }

    public long pid() {
        return process.pid();
    }

    /** SIGKILL: no shutdown hook runs, nothing is flushed. */
    public void kill9() {
        process.destroyForcibly();
        waitFor(Duration.ofSeconds(30));
    }

    /** SIGTERM, then waits; returns how long the process took to exit. */
    public Duration terminate(Duration max) {
        long t0 = System.nanoTime();
        process.destroy();
        waitFor(max);
        return Duration.ofNanos(System.nanoTime() - t0);
    }

    public boolean isAlive() {
        return process.isAlive();
    }

    private void waitFor(Duration max) {
        try {
            process.waitFor(max.toMillis(), java.util.concurrent.TimeUnit.MILLISECONDS);
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
        }
    }

    private static void sleep(long ms) {
        try {
            Thread.sleep(ms);
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
        }
    }

    @Override
    public void close() {
        if (process.isAlive()) {
            process.destroyForcibly();
            waitFor(Duration.ofSeconds(30));
        }
    }
}
