package dev.stopline.cli;

import io.quarkus.runtime.Quarkus;
import io.quarkus.runtime.QuarkusApplication;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;

/** {@code serve}: the long-running monitoring daemon. */
@Command(name = "serve", mixinStandardHelpOptions = true,
        description = "Run the monitoring daemon: Kafka consumer, REST API, status page, alerts.")
public final class ServeCommand implements Callable<Integer> {
    private static volatile boolean ranServer;

    static boolean ranServer() {
        return ranServer;
    }

    @Override
    public Integer call() {
        ranServer = true;
        Quarkus.run(Daemon.class);
        return 0;
    }

    /** The Quarkus application: runs until SIGTERM/SIGINT. */
    public static final class Daemon implements QuarkusApplication {
        @Override
        public int run(String... args) {
            Quarkus.waitForExit();
            return 0;
        }
    }
}
