package dev.stopline.cli;

import dev.stopline.simulate.Parallel;
import dev.stopline.simulate.ZScaleEngine;
import dev.stopline.simulate.ZScalePlan;
import dev.stopline.stats.groupseq.Boundaries;
import dev.stopline.stats.groupseq.Design;
import java.io.PrintWriter;
import java.util.Arrays;
import java.util.Locale;
import java.util.concurrent.Callable;
import java.util.function.Supplier;
import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/**
 * {@code bench}: prints the figures DEVELOPERS.md records. Boundary computation time
 * ({@link Boundaries#compute}) for K = 5, K = 10 with futility and K = 100, as median and 90th
 * percentile over repeated runs after a warm-up; and the throughput of the z-scale simulation
 * engine (100,000 trials of a 5-look plan). Wall-clock figures on a shared machine: run it twice.
 */
@Command(name = "bench", mixinStandardHelpOptions = true,
        description = "Measure boundary computation time and simulation throughput.")
public final class BenchCommand implements Callable<Integer> {
    @Spec
    CommandSpec spec;

    @Option(names = "--runs", defaultValue = "30", description = "Timed runs per figure (default: ${DEFAULT-VALUE}).")
    int runs;

    @Option(names = "--warmup", defaultValue = "10", description = "Untimed warm-up runs (default: ${DEFAULT-VALUE}).")
    int warmup;

    @Option(names = "--threads", description = "Simulation threads (default: the number of processors).")
    Integer threads;

    /** The designs timed: bookshop-sized, as in {@link Boundaries#benchmarkWorkload}. */
    static Design k5() {
        return Design.of(0.05, 2).withEqualLooks(5).withSpending("obrien-fleming");
    }

    static Design k10Futility() {
        return Design.of(0.025, 1).withEqualLooks(10).withSpending("obrien-fleming")
                .withFutility("hwang-shih-decani:-2", 0.1, true);
    }

    static Design k100() {
        return Design.of(0.05, 2).withEqualLooks(100).withSpending("pocock");
    }

    @Override
    public Integer call() {
        PrintWriter out = spec.commandLine().getOut();
        if (runs < 1 || warmup < 0) {
            spec.commandLine().getErr().println("--runs: must be >= 1 and --warmup >= 0");
            return 2;
        }
        out.printf(Locale.ROOT, "Boundaries.compute, %d runs after %d warm-up runs (milliseconds)%n", runs, warmup);
        time(out, "K=5 two-sided OBF-type", () -> Boundaries.compute(k5()));
        time(out, "K=10 one-sided + binding futility", () -> Boundaries.compute(k10Futility()));
        time(out, "K=100 two-sided Pocock-type", () -> Boundaries.compute(k100()));
        int t = threads == null ? Runtime.getRuntime().availableProcessors() : threads;
        out.printf(Locale.ROOT, "Simulation, z-scale engine, 100,000 trials of a 5-look plan, %d thread(s)%n", t);
        double[] r = simulation(t, 100_000, Math.max(3, Math.min(runs, 10)));
        out.printf(Locale.ROOT, "  median %.1f ms  =  %,.0f trials/s  =  %,.0f trial-looks/s (looks actually simulated)%n",
                r[0], r[1], r[2]);
        out.flush();
        return 0;
    }

    private void time(PrintWriter out, String label, Supplier<Object> work) {
        Object sink = null;
        for (int i = 0; i < warmup; i++) {
            sink = work.get();
        }
        double[] ms = new double[runs];
        for (int i = 0; i < runs; i++) {
            long t0 = System.nanoTime();
            sink = work.get();
            ms[i] = (System.nanoTime() - t0) / 1e6;
        }
        Arrays.sort(ms);
        out.printf(Locale.ROOT, "  %-36s median %8.3f   p90 %8.3f%s%n", label, ms[(runs - 1) / 2],
                ms[Math.min(runs - 1, (int) Math.ceil(0.9 * runs) - 1)], sink == null ? " (no result)" : "");
    }

    /** Median ms, trials/s and simulated trial-looks/s of {@code trials} trials of the 5-look plan at its design drift. */
    static double[] simulation(int threads, long trials, int repeats) {
        ZScalePlan plan = ZScalePlan.of(Boundaries.compute(k5().withPower(0.8)), 60_000);
        double theta = Boundaries.compute(k5().withPower(0.8)).drift();
        Parallel par = Parallel.of(threads, null);
        double[] ms = new double[repeats];
        double looks = 0;
        for (int i = 0; i < repeats + 2; i++) {
            long t0 = System.nanoTime();
            var c = ZScaleEngine.run(plan, theta, trials, 1000 + i, par);
            double elapsed = (System.nanoTime() - t0) / 1e6;
            if (i >= 2) {
                ms[i - 2] = elapsed;
            }
            double[] stop = c.stopLook();
            looks = 0;
            for (int k = 0; k < stop.length; k++) {
                looks += stop[k] * (k + 1);
            }
        }
        Arrays.sort(ms);
        double median = ms[(repeats - 1) / 2];
        return new double[] {median, trials / (median / 1e3), trials * looks / (median / 1e3)};
    }
}
