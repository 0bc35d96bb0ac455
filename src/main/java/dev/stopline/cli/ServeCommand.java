package dev.stopline.cli;

import io.quarkus.runtime.Quarkus;
import io.quarkus.runtime.QuarkusApplication;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;

/** {@code serve}: the long-running monitoring daemon. */
@Command(name = "serve", mixinStandardHelpOptions = true,
        description = "Run the monitoring daemon: Kafka consumer, REST API, status page, alerts.")
public final class ServeCommand implements Callable<Integer> {
    @Mixin
    DaemonOptions daemon = new DaemonOptions();

    @Override
    public Integer call() {
        return daemon.launch(Daemon.class, daemon.dataDir);
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
