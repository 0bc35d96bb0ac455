package dev.stopline.service;

import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.testing.DaemonProcess;
import dev.stopline.testing.FreePorts;
import dev.stopline.testing.KafkaBrokerExtension;
import java.io.IOException;
import java.net.Socket;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.List;
import org.junit.jupiter.api.Test;

/** {@code serve} on the embedded defaults stops cleanly on SIGTERM, broker included. */
class DaemonShutdownIT {
    /** What a supervisor (systemd, Kubernetes) usually grants before SIGKILL: common practice. */
    private static final Duration GRACE = Duration.ofSeconds(10);

    @Test
    void sigterm_stopsDaemonAndEmbeddedBrokerWithinTenSeconds_andLeavesNothingListening() throws IOException {
        Path dir = Files.createTempDirectory("stopline-shutdown-");
        int[] kafka = FreePorts.pickTwo();
        try {
            DaemonProcess d = DaemonProcess.serve(List.of("--data-dir", dir.toString(), "--kafka-port",
                    Integer.toString(kafka[0]), "--plans-dir", "config/plans"), dir.resolve("daemon.log"));
            assertTrue(listening(kafka[0]), "the embedded broker was up");
            Duration took = d.terminate(GRACE.plusSeconds(20));
            assertFalse(d.isAlive(), "the process exited");
            assertTrue(took.compareTo(GRACE) < 0, "took " + took.toMillis() + " ms; log: " + tail(dir));
            assertFalse(listening(kafka[0]), "the broker port is closed");
            assertFalse(listening(kafka[0] + 1), "the controller port is closed");
        } finally {
            KafkaBrokerExtension.deleteTree(dir);
        }
    }

    private static boolean listening(int port) {
        try (Socket s = new Socket("127.0.0.1", port)) {
            return true;
        } catch (IOException e) {
            return false;
        }
    }

    private static String tail(Path dir) throws IOException {
        List<String> lines = Files.readAllLines(dir.resolve("daemon.log"));
        return String.join("\n", lines.subList(Math.max(0, lines.size() - 30), lines.size()));
    }
}
