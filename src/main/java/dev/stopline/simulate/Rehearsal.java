package dev.stopline.simulate;

import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.plan.Method;
import dev.stopline.plan.MetricType;
import dev.stopline.plan.Plan;
import dev.stopline.plan.Primary;
import dev.stopline.stats.StatsException;
import java.util.ArrayList;
import java.util.List;

/**
 * A rehearsal of a stopping plan: its operating characteristics at chosen true effects, as it will
 * really run. Immutable; options are withers, the answer is a {@link RehearsalResult}.
 *
 * <p>Which method produces which figure:
 * <ul>
 *   <li>Group-sequential primary: exact figures by numerical integration ({@link ExactEngine}) and
 *       Monte Carlo figures from the fast Z-scale engine ({@link ZScaleEngine}, default 100,000
 *       trials); the two must agree within 3 standard errors.</li>
 *   <li>Everything the Z scale cannot express (SPRT and mixture-SPRT primaries, guardrails, the
 *       sample-ratio check, looks that overshoot their planned fraction, the look calendar): the
 *       data-level engine ({@link DataLevelEngine}, default 2,000 trials), which draws daily traffic and
 *       per-arm sums and runs the daemon's own {@link ExperimentMonitor} on every snapshot.</li>
 * </ul>
 * Every effect uses the same random streams (common random numbers), so differences between effects
 * are not blurred by independent noise.
 */
public final class Rehearsal {
    /** Default trials of the fast Z-scale engine. */
    public static final long DEFAULT_TRIALS = 100_000;
    /** Default trials of the data-level engine (each trial runs the full evaluator on every daily snapshot). */
    public static final long DEFAULT_DATA_TRIALS = 2_000;
    /** Default seed. */
    public static final long DEFAULT_SEED = 20270301L;

    private final Plan plan;
    private final double[] effects;
    private final long trials;
    private final long dataTrials;
    private final long seed;
    private final int threads;
    private final TrafficForecast traffic;
    private final Parallel.Progress progress;

    private Rehearsal(Plan plan, double[] effects, long trials, long dataTrials, long seed, int threads,
                      TrafficForecast traffic, Parallel.Progress progress) {
        this.plan = plan;
        this.effects = effects;
        this.trials = trials;
        this.dataTrials = dataTrials;
        this.seed = seed;
        this.threads = threads;
        this.traffic = traffic;
        this.progress = progress;
    }

    /** A rehearsal of a validated plan at its default effects ({@link #defaultEffects}). */
    public static Rehearsal of(Plan plan) {
        boolean gs = plan.primary().method() == Method.GROUP_SEQUENTIAL;
        return new Rehearsal(plan, defaultEffects(plan.primary()), gs ? DEFAULT_TRIALS : DEFAULT_DATA_TRIALS,
                DEFAULT_DATA_TRIALS, DEFAULT_SEED, Runtime.getRuntime().availableProcessors(), null, null);
    }

    /** 0 and the plan's minimum effect, if it has one. */
    public static double[] defaultEffects(Primary p) {
        Double d = p.minimumEffect() != null ? p.minimumEffect()
                : p.sprt() != null ? p.sprt().minimumEffect() : null;
        return d == null || d == 0 ? new double[] {0} : new double[] {0, d};
    }

    /** True absolute effects on the primary metric's scale (a proportion's treatment rate stays in [0, 1]). */
    public Rehearsal withEffects(double... e) {
        if (e == null || e.length == 0) {
            throw new StatsException("at least one effect is required");
        }
        Primary p = plan.primary();
        for (double x : e) {
            if (!Double.isFinite(x)) {
                throw new StatsException("effect %s must be finite", x);
            }
            if (p.type() == MetricType.PROPORTION) {
                double rate = p.baselineRate() + x;
                if (!(rate > 0 && rate < 1)) {
                    throw new StatsException("effect %s puts the treatment rate at %s, outside (0, 1) (baseline rate %s)",
                            x, rate, p.baselineRate());
                }
            }
        }
        return new Rehearsal(plan, e.clone(), trials, dataTrials, seed, threads, traffic, progress);
    }

    /** Trials of the main Monte Carlo engine (Z scale for group-sequential plans, data level otherwise); 0 skips it for a group-sequential plan. */
    public Rehearsal withTrials(long n) {
        return new Rehearsal(plan, effects, n, dataTrials, seed, threads, traffic, progress);
    }

    /** Trials of the data-level engine run in addition for a group-sequential plan; 0 skips it. */
    public Rehearsal withDataTrials(long n) {
        return new Rehearsal(plan, effects, trials, n, seed, threads, traffic, progress);
    }

    public Rehearsal withSeed(long s) {
        return new Rehearsal(plan, effects, trials, dataTrials, s, threads, traffic, progress);
    }

    public Rehearsal withThreads(int n) {
        return new Rehearsal(plan, effects, trials, dataTrials, seed, n, traffic, progress);
    }

    public Rehearsal withTraffic(TrafficForecast t) {
        return new Rehearsal(plan, effects, trials, dataTrials, seed, threads, t, progress);
    }

    public Rehearsal withProgress(Parallel.Progress p) {
        return new Rehearsal(plan, effects, trials, dataTrials, seed, threads, traffic, p);
    }

    public boolean groupSequential() {
        return plan.primary().method() == Method.GROUP_SEQUENTIAL;
    }

    /** Total trials the run will simulate (for a progress bar). */
    public long totalTrials() {
        long perEffect = groupSequential() ? trials + dataTrials : trials;
        return perEffect * effects.length;
    }

    public RehearsalResult run() {
        ExperimentMonitor monitor = ExperimentMonitor.of(plan, 1);
        Parallel par = Parallel.of(threads, progress);
        boolean gs = groupSequential();
        ZScalePlan z = gs ? ZScalePlan.of(monitor) : null;
        long data = gs ? dataTrials : trials;
        DataLevelEngine dataEngine = data > 0 ? DataLevelEngine.of(plan, traffic) : null;
        List<RehearsalResult.EffectResult> out = new ArrayList<>();
        for (double effect : effects) {
            Characteristics exact = null;
            Characteristics mc = null;
            double theta = Double.NaN;
            if (gs) {
                theta = z.drift(effect);
                exact = ExactEngine.run(z, theta);
                mc = trials > 0 ? ZScaleEngine.run(z, theta, trials, seed, par) : null;
            }
            DataLevelEngine.Result dl = dataEngine == null ? null : dataEngine.run(effect, data, seed, par);
            out.add(new RehearsalResult.EffectResult(effect, theta, exact, mc, dl));
        }
        double[][] paths = null;
        if (gs) {
            double theta = z.drift(effects[effects.length - 1]);
            paths = ZScaleEngine.samplePaths(z, theta, 8, seed);
        }
        LookCalendar calendar = traffic == null ? null : LookCalendar.of(monitor, traffic, seed, 10_000);
        return new RehearsalResult(plan, seed, gs ? trials : 0, data, threads, z, out, paths, calendar);
    }
}
