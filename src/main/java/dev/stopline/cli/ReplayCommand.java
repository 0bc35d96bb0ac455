package dev.stopline.cli;

import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.SerializationFeature;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.stopline.monitor.Alert;
import dev.stopline.monitor.Evaluation;
import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.monitor.LookRecord;
import dev.stopline.monitor.MonitorState;
import dev.stopline.monitor.Monitoring;
import dev.stopline.monitor.SampleRatioRecord;
import dev.stopline.plan.Plan;
import dev.stopline.plan.PlanException;
import dev.stopline.plan.PlanParser;
import dev.stopline.plan.PlanProblem;
import dev.stopline.stats.StatsException;
import dev.stopline.wire.SnapshotParser;
import java.io.BufferedInputStream;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.InputStream;
import java.io.PrintWriter;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.concurrent.Callable;
import java.util.stream.Collectors;
import picocli.CommandLine.Command;
import picocli.CommandLine.ITypeConverter;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;
import picocli.CommandLine.TypeConversionException;

/**
 * {@code replay}: the daemon's evaluator, offline. Reads a file of snapshots in the daemon's wire format
 * (one JSON object per line, blank lines skipped) and feeds each line to {@link Monitoring#process},
 * the very method the Kafka consumer calls, with the experiment's state kept in memory instead of the
 * database. Prints every look, every alert that would have fired and the alpha ledger; lines the daemon
 * would dead-letter are listed with their line number and stable reason code, and redelivered
 * (duplicate) lines are listed apart, as the daemon acknowledges them without a look.
 *
 * <p>Design note: a line is handed to the parser as raw bytes, as a Kafka record would be, so an
 * encoding error is {@code malformed-json} exactly as in the daemon. A line longer than the parser's
 * payload limit is not held in memory beyond the limit: its first {@code limit + 1} bytes are enough
 * for the parser to answer {@code too-large}.
 *
 * <p>Exit codes: 0 when the file was read (rejected lines included); 2 for bad options, an unreadable
 * file or an invalid plan, with one line on standard error; 1 when the evaluator itself throws on a
 * snapshot (a defect: the daemon would fail on the same record), also with one line.
 */
@Command(name = "replay", mixinStandardHelpOptions = true,
        description = {"Replay recorded snapshots through the daemon's evaluator, offline: every look, every alert "
                + "that would have fired, the alpha ledger, and the lines the daemon would reject.",
                "JSON output: boundaries at infinity (nothing spent at a look) and fields that do not apply to a "
                        + "method are null."})
public final class ReplayCommand implements Callable<Integer> {
    /** Exit code for bad options, an unreadable file or an invalid plan (picocli's usage-error code). */
    public static final int EXIT_USAGE = 2;
    /** Exit code when the evaluator itself fails on a snapshot (a defect, not bad input). */
    public static final int EXIT_EVALUATOR = 1;
    /** Plan version given to the monitor: a replay has one plan and no registry. */
    static final int PLAN_VERSION = 1;

    /** Output formats. */
    public enum Format {
        TABLE, JSON
    }

    @Spec
    CommandSpec spec;

    @Option(names = "--plan", required = true, paramLabel = "PLAN.yaml", description = "The stopping plan (YAML or JSON).")
    Path planFile;

    @Option(names = "--counts", required = true, paramLabel = "FILE.jsonl",
            description = "Snapshots in the daemon's wire format, one JSON object per line.")
    Path countsFile;

    @Option(names = "--format", defaultValue = "TABLE", paramLabel = "table|json",
            converter = FormatConverter.class,
            description = "Output: a table for people, or JSON for scripts (default: table).")
    Format format;

    /** Case-insensitive, so that {@code --format json} works without the root command's setting too. */
    static final class FormatConverter implements ITypeConverter<Format> {
        @Override
        public Format convert(String value) {
            for (Format f : Format.values()) {
                if (f.name().equalsIgnoreCase(value)) {
                    return f;
                }
            }
            throw new TypeConversionException("expected table or json, got '" + value + "'");
        }
    }

    @Override
    public Integer call() {
        Plan plan;
        try {
            plan = PlanParser.parse(planFile);
        } catch (PlanException e) {
            return fail("plan " + planFile + " is not valid: " + e.problems().stream().map(PlanProblem::toString)
                    .collect(Collectors.joining("; ")));
        } catch (IOException e) {
            return fail("cannot read plan " + planFile + ": " + describe(e));
        }
        ExperimentMonitor monitor;
        try {
            monitor = ExperimentMonitor.of(plan, PLAN_VERSION);
        } catch (StatsException e) {
            return fail("plan " + planFile + " cannot be monitored: " + e.getMessage());
        }
        Replay result;
        try (InputStream in = Files.newInputStream(countsFile)) {
            result = replay(monitor, in);
        } catch (IOException e) {
            return fail("cannot read counts " + countsFile + ": " + describe(e));
        } catch (EvaluatorFailure e) {
            spec.commandLine().getErr().println("replay: " + e.getMessage());
            spec.commandLine().getErr().flush();
            return EXIT_EVALUATOR;
        }
        PrintWriter out = spec.commandLine().getOut();
        out.print(format == Format.JSON ? json(result) + System.lineSeparator() : table(result));
        out.flush();
        return 0;
    }

    private int fail(String line) {
        PrintWriter err = spec.commandLine().getErr();
        err.println("replay: " + line);
        err.flush();
        return EXIT_USAGE;
    }

    private static String describe(IOException e) {
        String what = e.getClass().getSimpleName().replace("Exception", "");
        return e.getMessage() == null ? what : what + " " + e.getMessage();
    }

    // ------------------------------------------------------------------ the replay itself

    /** A line the daemon would not use: rejected (dead-letter) or a duplicate (acknowledged, no look). */
    record Skipped(long line, String reason, String detail) {
    }

    /** Everything a replay found, in file order. */
    record Replay(Plan plan, ExperimentMonitor monitor, long lines, long snapshots, List<LookRecord> looks,
                  List<SampleRatioRecord> sampleRatio, List<Alert> alerts, List<Skipped> rejected,
                  List<Skipped> duplicates) {
    }

    /**
     * Replays a stream against a plan: each non-blank line through {@link Monitoring#process} with a
     * null key (a file has no record keys), states in memory.
     */
    static Replay replay(ExperimentMonitor monitor, InputStream counts) throws IOException {
        Plan plan = monitor.plan();
        SnapshotParser parser = SnapshotParser.withDefaults();
        Monitoring monitoring = new Monitoring(parser, id -> id.equals(plan.experiment()) ? monitor : null);
        Map<String, MonitorState> states = new HashMap<>();
        List<LookRecord> looks = new ArrayList<>();
        List<SampleRatioRecord> ratios = new ArrayList<>();
        List<Alert> alerts = new ArrayList<>();
        List<Skipped> rejected = new ArrayList<>();
        List<Skipped> duplicates = new ArrayList<>();
        long snapshots = 0;
        LineReader reader = new LineReader(counts, parser.maxBytes() + 1);
        byte[] line;
        while ((line = reader.next()) != null) {
            if (isBlank(line)) {
                continue;
            }
            Monitoring.Step step;
            try {
                step = monitoring.process(line, null, states::get);
            } catch (StatsException e) {
                throw new EvaluatorFailure(reader.lineNumber(), e);
            }
            if (step instanceof Monitoring.Rejected r) {
                rejected.add(new Skipped(reader.lineNumber(), r.rejection().code(), r.rejection().detail()));
            } else if (step instanceof Monitoring.Duplicate d) {
                duplicates.add(new Skipped(reader.lineNumber(), "duplicate", "sequence " + d.snapshot().sequence()
                        + " was already accepted; acknowledged without a look"));
            } else {
                Evaluation e = ((Monitoring.Evaluated) step).evaluation();
                states.put(e.state().experiment(), e.state());
                looks.addAll(e.looks());
                ratios.add(e.sampleRatio());
                alerts.addAll(e.alerts());
                snapshots++;
            }
        }
        return new Replay(plan, monitor, reader.lineNumber(), snapshots, looks, ratios, alerts, rejected, duplicates);
    }

    /** The evaluator threw on an accepted snapshot: the daemon would fail on the same record. */
    static final class EvaluatorFailure extends RuntimeException {
        private static final long serialVersionUID = 1L;

        EvaluatorFailure(long line, StatsException cause) {
            super("the evaluator failed on line " + line + ": " + cause.getMessage(), cause);
        }
    }

    private static boolean isBlank(byte[] line) {
        for (byte b : line) {
            if (b != ' ' && b != '\t' && b != '\r') {
                return false;
            }
        }
        return true;
    }

    /** Reads lines as raw bytes (a trailing CR removed), keeping at most {@code cap} bytes of each. */
    static final class LineReader {
        private final InputStream in;
        private final int cap;
        private long number;

        LineReader(InputStream in, int cap) {
            this.in = new BufferedInputStream(in, 1 << 16);
            this.cap = cap;
        }

        /** The next line, or null at the end of the input. */
        byte[] next() throws IOException {
            ByteArrayOutputStream buf = new ByteArrayOutputStream(512);
            int b = in.read();
            if (b < 0) {
                return null;
            }
            while (b >= 0 && b != '\n') {
                if (buf.size() < cap) {
                    buf.write(b);
                }
                b = in.read();
            }
            number++;
            byte[] line = buf.toByteArray();
            int n = line.length;
            return n > 0 && n < cap && line[n - 1] == '\r' ? Arrays.copyOf(line, n - 1) : line;
        }

        /** 1-based number of the line last returned (the number of lines read so far). */
        long lineNumber() {
            return number;
        }
    }

    // ------------------------------------------------------------------ JSON

    private static final ObjectMapper JSON = new ObjectMapper().disable(SerializationFeature.INDENT_OUTPUT);

    /** The JSON document scripts read; the field order is part of the contract. */
    static String json(Replay r) {
        ObjectNode root = JSON.createObjectNode();
        root.put("experiment", r.plan().experiment());
        ArrayNode looks = root.putArray("looks");
        for (LookRecord l : r.looks()) {
            looks.add(look(l));
        }
        ArrayNode srm = root.putArray("sampleRatio");
        for (SampleRatioRecord s : r.sampleRatio()) {
            ObjectNode o = srm.addObject();
            o.put("sequence", s.sequence());
            o.put("pValue", s.pValue());
            o.put("mismatch", s.mismatch());
            o.put("chiSquare", s.chiSquare());
            o.set("units", JSON.valueToTree(s.units()));
        }
        ArrayNode alerts = root.putArray("alerts");
        for (Alert a : r.alerts()) {
            ObjectNode o = alerts.addObject();
            o.put("kind", a.kind().wireName());
            o.put("sequence", a.sequence());
            putInt(o, "look", a.lookNumber());
            o.put("metric", a.metric());
            o.put("id", a.id());
            o.put("summary", a.summary());
        }
        skipped(root.putArray("rejected"), r.rejected());
        skipped(root.putArray("duplicates"), r.duplicates());
        root.put("lines", r.lines());
        root.put("snapshots", r.snapshots());
        try {
            return JSON.writeValueAsString(root);
        } catch (JsonProcessingException e) {
            throw new IllegalStateException("a tree of plain values cannot fail to serialize", e);
        }
    }

    private static ObjectNode look(LookRecord l) {
        ObjectNode o = JSON.createObjectNode();
        o.put("sequence", l.sequence());
        putInt(o, "look", l.look());
        o.put("metric", l.metric());
        putNumber(o, "informationFraction", l.informationFraction());
        putNumber(o, "estimate", l.estimate());
        putNumber(o, "standardError", l.standardError());
        putNumber(o, "z", l.z());
        putNumber(o, "efficacyZ", l.efficacyZ());
        putNumber(o, "futilityZ", l.futilityZ());
        putNumber(o, "cumulativeAlphaSpent", l.cumulativeAlphaSpent());
        putNumber(o, "alwaysValidPValue", l.alwaysValidPValue());
        o.put("decision", l.decision().wireName());
        o.put("role", l.role());
        o.put("method", l.method());
        putInt(o, "plannedLooks", l.plannedLooks());
        o.put("observedAt", l.observedAt().toString());
        putNumber(o, "controlValue", l.controlValue());
        putNumber(o, "treatmentValue", l.treatmentValue());
        putNumber(o, "relativeDifference", l.relativeDifference());
        putNumber(o, "nominalPValue", l.nominalPValue());
        putNumber(o, "intervalLower", l.intervalLower());
        putNumber(o, "intervalUpper", l.intervalUpper());
        putNumber(o, "adjustedPValue", l.adjustedPValue());
        putNumber(o, "medianUnbiasedEstimate", l.medianUnbiasedEstimate());
        putNumber(o, "conditionalPowerCurrent", l.conditionalPowerCurrent());
        putNumber(o, "conditionalPowerDesign", l.conditionalPowerDesign());
        putNumber(o, "margin", l.margin());
        return o;
    }

    private static void skipped(ArrayNode array, List<Skipped> lines) {
        for (Skipped s : lines) {
            ObjectNode o = array.addObject();
            o.put("line", s.line());
            o.put("reason", s.reason());
            o.put("detail", s.detail());
        }
    }

    /** Null when absent or not finite (JSON has no infinity). */
    private static void putNumber(ObjectNode o, String field, Double x) {
        if (x == null || !Double.isFinite(x)) {
            o.putNull(field);
        } else {
            o.put(field, x.doubleValue());
        }
    }

    private static void putInt(ObjectNode o, String field, Integer x) {
        if (x == null) {
            o.putNull(field);
        } else {
            o.put(field, x.intValue());
        }
    }

    // ------------------------------------------------------------------ table

    private static final String ROW = "%-9s  %-20s  %5s  %6s  %8s  %11s  %10s  %8s  %-17s  %11s  %10s  %s%n";

    /** The table for people: looks, then alerts with their summary, then the lines not used. */
    static String table(Replay r) {
        StringBuilder b = new StringBuilder();
        Plan p = r.plan();
        b.append(String.format(Locale.ROOT, "Replay of %s: primary %s by %s; %d lines, %d snapshots evaluated, "
                        + "%d rejected, %d duplicate%n", p.experiment(), p.primary().metric(), p.primary().method().key(),
                r.lines(), r.snapshots(), r.rejected().size(), r.duplicates().size()));
        b.append(String.format(Locale.ROOT, "%nLooks (%d)%n", r.looks().size()));
        b.append(String.format(Locale.ROOT, ROW, "role", "metric", "look", "seq", "fraction", "estimate", "se", "z",
                "boundary", "alpha spent", "p", "decision"));
        for (LookRecord l : r.looks()) {
            b.append(String.format(Locale.ROOT, ROW, l.role(), l.metric(), l.look() == null ? "-" : l.look().toString(),
                    l.sequence(), fmt("%.4f", l.informationFraction()), fmt("%+.4g", l.estimate()),
                    fmt("%.4g", l.standardError()), fmt("%+.3f", l.z()), boundary(l, p.primary().sides()),
                    fmt("%.4g", l.cumulativeAlphaSpent()), fmt("%.4g", validP(l)), l.decision().wireName()));
        }
        b.append("p: always-valid p-value (SPRT, guardrails) or stage-wise adjusted p-value at a group-sequential "
                + "stop; a nominal p-value is not valid under repeated looks and is not shown.").append('\n');
        ledger(b, r);
        b.append(String.format(Locale.ROOT, "%nAlerts (%d)%n", r.alerts().size()));
        for (Alert a : r.alerts()) {
            b.append(String.format(Locale.ROOT, "  seq %-5d %-12s %s%n", a.sequence(), a.kind().wireName(), a.summary()));
        }
        skippedTable(b, "Rejected lines", r.rejected());
        skippedTable(b, "Duplicate lines (acknowledged without a look)", r.duplicates());
        return b.toString();
    }

    /** The alpha ledger of a group-sequential primary: what each formal look spent, of the plan's alpha. */
    private static void ledger(StringBuilder b, Replay r) {
        List<LookRecord> formal = r.looks().stream()
                .filter(l -> l.role().equals(LookRecord.PRIMARY) && l.cumulativeAlphaSpent() != null).toList();
        if (formal.isEmpty()) {
            return;
        }
        b.append(String.format(Locale.ROOT, "%nAlpha ledger (%s, alpha %s)%n", r.plan().primary().metric(),
                r.plan().primary().alpha()));
        double before = 0;
        for (LookRecord l : formal) {
            b.append(String.format(Locale.ROOT, "  look %d of %d at information %.4f: spent %s, cumulative %s%s%n",
                    l.look(), l.plannedLooks(), l.informationFraction(), fmt("%.4g", l.cumulativeAlphaSpent() - before),
                    fmt("%.4g", l.cumulativeAlphaSpent()), l.decision().endsPrimary() ? " (" + l.decision().wireName()
                            + ": no further looks)" : ""));
            before = l.cumulativeAlphaSpent();
        }
    }

    private static void skippedTable(StringBuilder b, String title, List<Skipped> lines) {
        b.append(String.format(Locale.ROOT, "%n%s (%d)%n", title, lines.size()));
        for (Skipped s : lines) {
            b.append(String.format(Locale.ROOT, "  line %-5d %-18s %s%n", s.line(), s.reason(), s.detail()));
        }
    }

    /** Efficacy boundary (two-sided as +/-), futility after a slash; a guardrail shows its margin. */
    private static String boundary(LookRecord l, int sides) {
        if (l.efficacyZ() != null) {
            String eff = (sides == 2 ? "+/-" : "") + fmt("%.3f", l.efficacyZ());
            return l.futilityZ() == null ? eff : eff + " / " + fmt("%.3f", l.futilityZ());
        }
        return l.margin() == null ? "-" : "margin " + fmt("%.4g", l.margin());
    }

    private static Double validP(LookRecord l) {
        return l.alwaysValidPValue() != null ? l.alwaysValidPValue() : l.adjustedPValue();
    }

    private static String fmt(String pattern, Double x) {
        if (x == null) {
            return "-";
        }
        if (Double.isInfinite(x)) {
            return x > 0 ? "inf" : "-inf";
        }
        return String.format(Locale.ROOT, pattern, x);
    }
}
