package dev.stopline.cli;

import picocli.CommandLine;

/** How every subcommand reports a usage error: one line on the error stream, no usage dump. */
final class CliErrors {
    /** Prints only the error message (one line) to the error writer and returns exit code 2. */
    static final CommandLine.IParameterExceptionHandler ONE_LINE = (ex, args) -> {
        CommandLine cmd = ex.getCommandLine();
        cmd.getErr().println(ex.getMessage());
        cmd.getErr().flush();
        return cmd.getCommandSpec().exitCodeOnInvalidInput();
    };

    private CliErrors() {
    }
}
