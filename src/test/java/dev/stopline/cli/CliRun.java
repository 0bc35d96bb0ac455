package dev.stopline.cli;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.io.IOException;
import java.io.PrintWriter;
import java.io.StringWriter;
import picocli.CommandLine;

/** One in-process run of {@code stopline ARGS} through the jar's command tree: exit code, stdout, stderr. */
record CliRun(int code, String out, String err) {
    private static final ObjectMapper JSON = new ObjectMapper();

    static CliRun run(String... args) {
        CommandLine cli = Main.commandLine();
        StringWriter out = new StringWriter();
        StringWriter err = new StringWriter();
        cli.setOut(new PrintWriter(out));
        cli.setErr(new PrintWriter(err));
        int code = cli.execute(args);
        return new CliRun(code, out.toString(), err.toString());
    }

    /** Standard output read as JSON. */
    JsonNode json() {
        try {
            return JSON.readTree(out);
        } catch (IOException e) {
            throw new AssertionError("output is not JSON: " + out, e);
        }
    }
}
