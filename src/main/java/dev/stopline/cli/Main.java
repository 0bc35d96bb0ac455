package dev.stopline.cli;

import io.quarkus.runtime.annotations.QuarkusMain;
import picocli.CommandLine;

/**
 * The one entry point of {@code quarkus-run.jar}.
 *
 * <p>Design note: only {@code serve} (and {@code demo}, which serves) boots the Quarkus container
 * with its HTTP server, Kafka consumers and database. The offline subcommands ({@code design},
 * {@code simulate}, {@code replay}, {@code bench}) are plain picocli commands over the pure
 * statistics core: they start in a fraction of a second and can never join a running daemon's
 * consumer group or lock its database. Measured start-up figures are in DEVELOPERS.md.
 */
@QuarkusMain
public final class Main {
    private Main() {
    }

    public static void main(String... args) {
        System.exit(commandLine().execute(args));
    }

    /** The command tree, shared by the jar and by the tests. */
    public static CommandLine commandLine() {
        CommandLine cli = new CommandLine(new StoplineCommand());
        cli.setCaseInsensitiveEnumValuesAllowed(true);
        // one line naming the option and the rule, exit code 2 (no usage dump after it)
        cli.setParameterExceptionHandler(CliErrors.ONE_LINE);
        return cli;
    }
}
