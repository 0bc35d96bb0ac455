package dev.stopline.cli;

import dev.stopline.plan.Plan;
import dev.stopline.plan.PlanException;
import dev.stopline.plan.PlanParser;
import dev.stopline.simulate.DataLevelEngine;
import dev.stopline.simulate.HtmlReport;
import dev.stopline.simulate.Parallel;
import dev.stopline.simulate.Rehearsal;
import dev.stopline.simulate.RehearsalJson;
import dev.stopline.simulate.RehearsalResult;
import dev.stopline.simulate.RehearsalTable;
import dev.stopline.simulate.TrafficForecast;
import java.io.IOException;
import java.io.PrintWriter;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.concurrent.Callable;
import java.util.concurrent.atomic.AtomicLong;
import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/**
 * {@code simulate}: rehearse a stopping plan. Prints its operating characteristics at chosen true
 * effects (type I error, power, futility, units per arm, where it stops), the false-alarm rates of
 * its guardrails and sample-ratio check, and with a traffic forecast the look calendar. Offline: no
 * Quarkus container starts.
 */
@Command(name = "simulate", mixinStandardHelpOptions = true,
        description = "Rehearse a stopping plan: operating characteristics by numerical integration and seeded "
                + "Monte Carlo, false alarms of guardrails and the sample-ratio check, look calendar.")
public final class SimulateCommand implements Callable<Integer> {
    /** Exit code of a bad option (picocli's usage-error code). */
    static final int USAGE = 2;

    @Spec
    CommandSpec spec;

    @Option(names = "--plan", required = true, description = "Stopping plan file (YAML or JSON).")
    Path plan;

    @Option(names = "--effects", description = "True effects to rehearse, absolute on the primary metric's scale, "
            + "comma-separated (default: 0 and the plan's minimumEffect).")
    String effects;

    @Option(names = "--trials", description = "Monte Carlo trials per effect (default: 100000 with the z-scale engine "
            + "for a group-sequential primary, 2000 with the data-level engine otherwise).")
    String trials;

    @Option(names = "--data-trials", description = "Data-level trials per effect in addition, for a group-sequential "
            + "primary (guardrails, sample ratio, daily snapshots); 0 skips them (default: 2000).")
    String dataTrials;

    @Option(names = "--seed", description = "Random seed (default: 20270301). Same seed, same output.")
    String seed;

    @Option(names = "--threads", description = "Worker threads (default: the number of processors). Never changes a figure.")
    String threads;

    @Option(names = "--traffic", description = "Traffic forecast (YAML or CSV) for the look calendar and daily snapshots.")
    Path traffic;

    @Option(names = "--format", defaultValue = "table", description = "table or json (default: ${DEFAULT-VALUE}).")
    String format;

    @Option(names = "--report", description = "Also write a self-contained HTML report with charts to this file.")
    Path report;

    /** The parsed --traffic forecast, or null. */
    private TrafficForecast forecast;

    /** A bad option: the message names the option and the rule. */
    static final class BadOption extends Exception {
        private static final long serialVersionUID = 1L;

        BadOption(String message) {
            super(message);
        }
    }

    @Override
    public Integer call() throws IOException {
        PrintWriter out = spec.commandLine().getOut();
        PrintWriter err = spec.commandLine().getErr();
        Rehearsal rehearsal;
        try {
            rehearsal = configure();
        } catch (BadOption e) {
            err.println(e.getMessage());
            err.flush();
            return USAGE;
        }
        ProgressBar bar = ProgressBar.start(err, rehearsal.totalTrials());
        RehearsalResult result;
        try {
            result = rehearsal.withProgress(bar).run();
        } catch (DataLevelEngine.EvaluatorFailure e) {
            bar.stop();
            err.println("simulate: " + e.getMessage() + "; --data-trials 0 skips the data-level engine");
            err.flush();
            return 1;
        } finally {
            bar.stop();
        }
        List<String> notes = notes(result);
        out.print("json".equals(format) ? RehearsalJson.render(result, notes) + System.lineSeparator()
                : RehearsalTable.render(result, notes));
        out.flush();
        if (report != null) {
            Files.writeString(report, HtmlReport.render(result, notes), StandardCharsets.UTF_8);
            err.println("report written to " + report);
            err.flush();
        }
        return 0;
    }

    private Rehearsal configure() throws BadOption {
        if (!"table".equals(format) && !"json".equals(format)) {
            throw new BadOption("--format: must be table or json, got '" + format + "'");
        }
        Plan p;
        try {
            p = PlanParser.parse(plan);
        } catch (PlanException e) {
            throw new BadOption("--plan: " + plan + ": " + e.getMessage().replace("\n", " "));
        } catch (IOException e) {
            throw new BadOption("--plan: cannot read " + plan + ": " + e.getMessage());
        }
        Rehearsal r = Rehearsal.of(p);
        try {
            if (effects != null) {
                r = r.withEffects(parseEffects(effects));
            }
        } catch (IllegalArgumentException e) {
            throw new BadOption("--effects: " + e.getMessage());
        }
        if (trials != null) {
            long n = parseLong("--trials", trials);
            long min = r.groupSequential() ? 0 : 2;
            if (n != 0 && n < 2 || n < min || n > 100_000_000L) {
                throw new BadOption("--trials: must be " + (r.groupSequential() ? "0 or " : "") + "in [2, 100000000], got " + n);
            }
            r = r.withTrials(n);
        }
        if (dataTrials != null) {
            long n = parseLong("--data-trials", dataTrials);
            if (n != 0 && n < 2 || n > 10_000_000L) {
                throw new BadOption("--data-trials: must be 0 or in [2, 10000000], got " + n);
            }
            r = r.withDataTrials(n);
        }
        if (seed != null) {
            r = r.withSeed(parseLong("--seed", seed));
        }
        if (threads != null) {
            long n = parseLong("--threads", threads);
            if (n < 1 || n > 256) {
                throw new BadOption("--threads: must be in [1, 256], got " + n);
            }
            r = r.withThreads((int) n);
        }
        if (traffic != null) {
            try {
                forecast = TrafficForecast.read(traffic);
                r = r.withTraffic(forecast);
            } catch (IOException e) {
                throw new BadOption("--traffic: cannot read " + traffic + ": " + e.getMessage());
            } catch (IllegalArgumentException e) {
                throw new BadOption("--traffic: " + traffic + ": " + e.getMessage());
            }
        }
        try {
            DataLevelEngine.of(p, null);
        } catch (IllegalArgumentException e) {
            throw new BadOption("--plan: cannot simulate: " + e.getMessage());
        }
        return r;
    }

    private static double[] parseEffects(String s) {
        String[] parts = s.split(",");
        double[] e = new double[parts.length];
        for (int i = 0; i < parts.length; i++) {
            try {
                e[i] = Double.parseDouble(parts[i].trim());
            } catch (NumberFormatException x) {
                throw new IllegalArgumentException("must be comma-separated numbers, got '" + parts[i].trim() + "'");
            }
        }
        if (e.length > 50) {
            throw new IllegalArgumentException("at most 50 effects, got " + e.length);
        }
        return e;
    }

    private static long parseLong(String option, String s) throws BadOption {
        try {
            return Long.parseLong(s.trim().replace("_", ""));
        } catch (NumberFormatException e) {
            throw new BadOption(option + ": must be an integer, got '" + s + "'");
        }
    }

    private List<String> notes(RehearsalResult r) {
        List<String> notes = new ArrayList<>();
        if (r.zPlan() != null) {
            notes.add("[exact] is numerical integration at the planned looks (Armitage-McPherson-Rowe recursion); "
                    + "[MC z-scale] simulates the Z statistic at the planned looks; both obey the futility bound.");
        }
        if (r.dataTrials() > 0) {
            notes.add("[MC data-level] draws " + (r.calendar() == null ? "one snapshot per 1/50 of the maximum size"
                    : "daily traffic from the forecast") + " and runs the daemon's evaluator on every snapshot; "
                    + "guardrails have no true harm and the split is correct, so their alerts are false alarms.");
            for (String b : DataLevelEngine.of(r.plan(), forecast).baselineNotes()) {
                if (b.endsWith("(assumed)")) {
                    notes.add("baseline " + b + ": give it under 'metrics:' in a --traffic forecast");
                }
            }
        }
        if (r.calendar() == null) {
            notes.add("no --traffic forecast: looks are reported in units only.");
        }
        notes.add("the same random streams serve every effect (common random numbers).");
        return notes;
    }

    /** A progress bar on stderr, shown only on a terminal and only once the run has taken a second. */
    static final class ProgressBar implements Parallel.Progress {
        private final AtomicLong done = new AtomicLong();
        private final long total;
        private final PrintWriter err;
        private final Thread thread;
        private volatile boolean running = true;
        private volatile boolean drawn;

        private ProgressBar(PrintWriter err, long total, boolean terminal) {
            this.err = err;
            this.total = Math.max(1, total);
            this.thread = terminal ? new Thread(this::loop, "simulate-progress") : null;
            if (thread != null) {
                thread.setDaemon(true);
                thread.start();
            }
        }

        static ProgressBar start(PrintWriter err, long total) {
            return new ProgressBar(err, total, System.console() != null);
        }

        @Override
        public void finished(long trials) {
            done.addAndGet(trials);
        }

        private void loop() {
            long begin = System.nanoTime();
            try {
                while (running) {
                    Thread.sleep(100);
                    if (running && System.nanoTime() - begin > 1_000_000_000L) {
                        draw();
                    }
                }
            } catch (InterruptedException e) {
                Thread.currentThread().interrupt();
            }
        }

        private synchronized void draw() {
            long d = Math.min(done.get(), total);
            int width = 30;
            int filled = (int) (width * d / total);
            err.print(String.format(Locale.ROOT, "\r[%s%s] %3d%% %,d/%,d trials", "#".repeat(filled),
                    ".".repeat(width - filled), 100 * d / total, d, total));
            err.flush();
            drawn = true;
        }

        void stop() {
            running = false;
            if (thread != null) {
                thread.interrupt();
                try {
                    thread.join(1000);
                } catch (InterruptedException e) {
                    Thread.currentThread().interrupt();
                }
            }
            synchronized (this) {
                if (drawn) {
                    err.print("\r" + " ".repeat(60) + "\r");
                    err.flush();
                    drawn = false;
                }
            }
        }
    }
}
