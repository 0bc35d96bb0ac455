package dev.stopline.cli;

import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/** Top of the command tree: {@code stopline <subcommand>}. */
@Command(name = "stopline",
        mixinStandardHelpOptions = true,
        versionProvider = VersionProvider.class,
        description = "Watches running experiments and says, with valid sequential evidence, when one may stop.",
        subcommands = {DesignCommand.class, SimulateCommand.class, ServeCommand.class, DemoCommand.class,
            ReplayCommand.class, BenchCommand.class})
public final class StoplineCommand implements Runnable {
    @Spec
    CommandSpec spec;

    @Override
    public void run() {
        throw new ParameterException(spec.commandLine(), "a subcommand is required: " + String.join(", ",
                spec.subcommands().keySet()));
    }
}
