package dev.stopline.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.PrintWriter;
import java.io.StringWriter;
import org.junit.jupiter.api.Test;
import picocli.CommandLine;

class MainTest {
    @Test
    void noSubcommand_isAUsageErrorThatListsTheSubcommands() {
        CommandLine cli = Main.commandLine();
        StringWriter err = new StringWriter();
        cli.setErr(new PrintWriter(err));
        int code = cli.execute();
        assertEquals(2, code, "picocli's exit code for a usage error");
        assertTrue(err.toString().contains("a subcommand is required: design, simulate, serve, demo, replay, bench"), err.toString());
    }
}
