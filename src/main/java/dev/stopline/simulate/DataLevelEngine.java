package dev.stopline.simulate;

import dev.stopline.monitor.Alert;
import dev.stopline.monitor.AlertKind;
import dev.stopline.monitor.Decision;
import dev.stopline.monitor.Evaluation;
import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.monitor.LookRecord;
import dev.stopline.monitor.MonitorState;
import dev.stopline.plan.Guardrail;
import dev.stopline.plan.Method;
import dev.stopline.plan.MetricType;
import dev.stopline.plan.Plan;
import dev.stopline.plan.Primary;
import dev.stopline.stats.StatsException;
import dev.stopline.wire.ArmCounts;
import dev.stopline.wire.MetricSums;
import dev.stopline.wire.Snapshot;
import java.time.Instant;
import java.time.ZoneOffset;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;

/**
 * Monte Carlo at the level of the data the daemon receives. Each trial draws, day by day, the units
 * entering the experiment (from the {@link TrafficForecast}, or without one a fixed batch of 1/50 of
 * the maximum size per snapshot), splits them over the arms by binomial draws at the planned
 * allocation (a correct split), draws each arm's sufficient statistics, and hands the cumulative
 * snapshot to the daemon's own {@link ExperimentMonitor}. The trial ends when the primary analysis
 * ends. So SPRT, mixture SPRT, guardrails, the sample-ratio check and looks that overshoot their
 * planned fraction behave exactly as the daemon evaluates them.
 *
 * <p>Per arm and day with n units:
 * <ul>
 *   <li>proportion with rate p: {@code sum = sumOfSquares = Binomial(n, p)};</li>
 *   <li>mean with mean mu and sd sigma: {@code sum ~ N(n mu, n sigma^2)} and
 *       {@code sumOfSquares = sum^2 / n + sigma^2 X}, X the normal approximation
 *       {@code N(n - 1, 2 (n - 1))} of chi-square with n - 1 degrees of freedom (exact in law for
 *       normal data apart from that approximation).</li>
 * </ul>
 * The primary's treatment arm has the true effect added; guardrail metrics have none (no harm), so
 * their alerts are false alarms, as are sample-ratio alerts. Ratio metrics are not simulated.
 *
 * <p>Binomial draws: inversion by sequential search when n p (1 - p) &lt; 50, otherwise the normal
 * approximation rounded to the nearest integer (skewness below 0.15 there; our approximation, stated
 * here because it touches the tails the sample-ratio check looks at).
 */
public final class DataLevelEngine {
    /** Trials per chunk (each chunk has its own generator). */
    static final int CHUNK = 16;
    /** Snapshots per maximum size without a traffic forecast. */
    static final int SNAPSHOTS_WITHOUT_TRAFFIC = 50;
    /** A trial gives up (no decision) after this many times the snapshots expected to reach the maximum size. */
    static final int HORIZON_FACTOR = 20;

    private final Plan plan;
    private final ExperimentMonitor monitor;
    private final TrafficForecast traffic;
    private final String[] arms;
    private final double[] weights;
    private final int controlIndex;
    private final int treatmentIndex;
    private final MetricModel[] metrics;
    private final long batch;
    private final int maxSnapshots;
    private final int guardrails;

    /** A metric's baseline in the simulation and where it came from. */
    record MetricModel(String name, MetricType type, double rate, double mean, double sd, boolean primary,
                       String source) {
    }

    private DataLevelEngine(Plan plan, TrafficForecast traffic) {
        this.plan = plan;
        this.monitor = ExperimentMonitor.of(plan, 1);
        this.traffic = traffic;
        this.arms = plan.allocation().keySet().toArray(new String[0]);
        this.weights = plan.allocation().values().stream().mapToDouble(Double::doubleValue).toArray();
        int c = -1;
        int t = -1;
        for (int i = 0; i < arms.length; i++) {
            if (arms[i].equals(plan.control())) {
                c = i;
            } else if (t < 0) {
                t = i;
            }
        }
        this.controlIndex = c;
        this.treatmentIndex = t;
        this.metrics = models(plan, traffic);
        this.guardrails = plan.guardrails().size();
        double wMax = Arrays.stream(weights).max().orElseThrow();
        double totalMax = monitor.sizing().maxUnitsPerArm() / wMax;
        this.batch = Math.max(1, (long) Math.ceil(totalMax / SNAPSHOTS_WITHOUT_TRAFFIC));
        double expectedDays = traffic == null ? SNAPSHOTS_WITHOUT_TRAFFIC : totalMax / traffic.meanUnitsPerDay();
        this.maxSnapshots = (int) Math.min(100_000, Math.ceil(expectedDays) * HORIZON_FACTOR + 10);
    }

    /** An engine for a validated plan; {@code traffic} may be null. */
    public static DataLevelEngine of(Plan plan, TrafficForecast traffic) {
        return new DataLevelEngine(plan, traffic);
    }

    private static MetricModel[] models(Plan plan, TrafficForecast traffic) {
        Primary p = plan.primary();
        List<MetricModel> out = new ArrayList<>();
        Map<String, TrafficForecast.MetricBaseline> given = traffic == null ? Map.of() : traffic.metrics();
        out.add(model(p.metric(), p.type(), p.baselineRate(), p.baselineMean(), p.sd(), true, "plan", given));
        for (Guardrail g : plan.guardrails()) {
            if (!g.metric().equals(p.metric())) {
                out.add(model(g.metric(), g.type(), null, null, null, false, null, given));
            }
        }
        return out.toArray(new MetricModel[0]);
    }

    /** Default guardrail baselines when neither plan nor forecast gives one (our assumption, reported). */
    static final double DEFAULT_RATE = 0.05;
    static final double DEFAULT_MEAN = 1.0;
    static final double DEFAULT_SD = 1.0;

    private static MetricModel model(String name, MetricType type, Double rate, Double mean, Double sd,
                                     boolean primary, String source, Map<String, TrafficForecast.MetricBaseline> given) {
        if (type == MetricType.RATIO) {
            throw new StatsException("metric %s: ratio metrics are not simulated at the data level", name);
        }
        TrafficForecast.MetricBaseline b = given.get(name);
        if (!primary && b != null) {
            return new MetricModel(name, type, b.rate(), b.mean(), b.sd(), false, "traffic forecast");
        }
        if (type == MetricType.PROPORTION) {
            return rate != null ? new MetricModel(name, type, rate, Double.NaN, Double.NaN, primary, source)
                    : new MetricModel(name, type, DEFAULT_RATE, Double.NaN, Double.NaN, primary, "assumed");
        }
        return mean != null && sd != null ? new MetricModel(name, type, Double.NaN, mean, sd, primary, source)
                : new MetricModel(name, type, Double.NaN, DEFAULT_MEAN, DEFAULT_SD, primary, "assumed");
    }

    /** The metric baselines used, in snapshot order: name, type, baseline, source. */
    public List<String> baselineNotes() {
        List<String> notes = new ArrayList<>();
        for (MetricModel m : metrics) {
            String what = m.type() == MetricType.PROPORTION ? "rate " + m.rate()
                    : "mean " + m.mean() + ", sd " + m.sd();
            notes.add(m.name() + ": " + what + " (" + m.source() + ")");
        }
        return notes;
    }

    /**
     * The result at one effect.
     *
     * @param primary           the primary's characteristics as the daemon decides
     * @param guardrailAlarm    per guardrail (plan order), P(a harm alert before the primary ends) under no harm
     * @param guardrailAlarmSe  their standard errors
     * @param sampleRatioAlarm  P(a sample-ratio alert before the primary ends) under a correct split
     * @param sampleRatioAlarmSe its standard error
     * @param noDecision        P(the trial ran out of its horizon without a primary decision)
     * @param stopDays          day index (0 = start) of the snapshot that ended each trial, sorted
     * @param snapshotsPerLook  for a group-sequential primary: mean snapshots between formal looks
     * @param overshoot         for a group-sequential primary: mean (reached fraction - planned fraction) at the looks
     */
    public record Result(Characteristics primary, double[] guardrailAlarm, double[] guardrailAlarmSe,
                         double sampleRatioAlarm, double sampleRatioAlarmSe, double noDecision, int[] stopDays,
                         double overshoot) {
    }

    /** Runs {@code trials} trials at the true effect on the primary metric. */
    public Result run(double effect, long trials, long seed, Parallel parallel) {
        if (trials < 2) {
            throw new IllegalArgumentException("trials " + trials + " must be >= 2");
        }
        int chunks = (int) ((trials + CHUNK - 1) / CHUNK);
        SplittableRandom[] gens = Parallel.generators(seed ^ 0x5DA7A1E5L, chunks);
        Outcome[][] parts = parallel.map(chunks, i -> {
            int n = (int) Math.min(CHUNK, trials - (long) i * CHUNK);
            Outcome[] o = new Outcome[n];
            for (int j = 0; j < n; j++) {
                o[j] = trial(effect, gens[i]);
            }
            parallel.progress().finished(n);
            return o;
        }, Outcome[][]::new);
        List<Outcome> all = new ArrayList<>();
        for (Outcome[] p : parts) {
            all.addAll(Arrays.asList(p));
        }
        return summarise(all);
    }

    /** The daemon's evaluator threw on a simulated snapshot: the daemon would fail the same way on real data. */
    public static final class EvaluatorFailure extends IllegalStateException {
        private static final long serialVersionUID = 1L;

        EvaluatorFailure(int snapshot, RuntimeException cause) {
            super("the daemon's evaluator failed on simulated snapshot " + snapshot + " (it would fail the same way "
                    + "in the daemon): " + cause.getMessage(), cause);
        }
    }

    /** What one trial did. */
    record Outcome(Decision decision, int look, long units, int day, boolean[] guardrailAlarm, boolean srmAlarm,
                   double overshootSum, int formalLooks) {
    }

    private Outcome trial(double effect, SplittableRandom rng) {
        int k = arms.length;
        long[] units = new long[k];
        double[][] sum = new double[k][metrics.length];
        double[][] sumSq = new double[k][metrics.length];
        MonitorState state = monitor.initialState();
        boolean[] alarm = new boolean[guardrails];
        boolean srm = false;
        double overshoot = 0;
        int formal = 0;
        double[] planned = plannedFractions();
        LocalDateClock clock = new LocalDateClock(traffic == null ? TrafficForecast.DEFAULT_START : traffic.start());
        for (int day = 0; day < maxSnapshots; day++) {
            long total = traffic == null ? batch : traffic.draw(day, rng);
            long[] split = split(total, rng);
            for (int a = 0; a < k; a++) {
                long n = split[a];
                units[a] += n;
                for (int m = 0; m < metrics.length; m++) {
                    draw(metrics[m], a == treatmentIndex && metrics[m].primary() ? effect : 0, n, rng, sum[a], sumSq[a], m);
                }
            }
            Snapshot snap = snapshot(day, clock.endOfDay(day), units, sum, sumSq);
            Evaluation ev;
            try {
                ev = monitor.evaluate(state, snap);
            } catch (RuntimeException e) {
                throw new EvaluatorFailure(day + 1, e);
            }
            state = ev.state();
            for (Alert alert : ev.alerts()) {
                if (alert.kind() == AlertKind.SAMPLE_RATIO) {
                    srm = true;
                } else if (alert.kind() == AlertKind.GUARDRAIL) {
                    alarm[guardrailIndex(alert.metric())] = true;
                }
            }
            for (LookRecord look : ev.looks()) {
                if (LookRecord.PRIMARY.equals(look.role()) && planned.length > 0) {
                    overshoot += look.informationFraction() - planned[Math.min(formal, planned.length - 1)];
                    formal++;
                }
            }
            Decision d = state.primaryDecision();
            if (d != null) {
                int look = plan.primary().method() == Method.GROUP_SEQUENTIAL ? state.looksTaken() : day + 1;
                return new Outcome(d, look, maxArm(units), day, alarm, srm, overshoot, formal);
            }
        }
        return new Outcome(null, maxSnapshots, maxArm(units), maxSnapshots - 1, alarm, srm, overshoot, formal);
    }

    private double[] plannedFractions() {
        Primary p = plan.primary();
        return p.method() == Method.GROUP_SEQUENTIAL
                ? p.looks().fractions().stream().mapToDouble(Double::doubleValue).toArray() : new double[0];
    }

    private int guardrailIndex(String metric) {
        for (int i = 0; i < guardrails; i++) {
            if (plan.guardrails().get(i).metric().equals(metric)) {
                return i;
            }
        }
        throw new IllegalStateException("alert for unknown guardrail " + metric);
    }

    private long maxArm(long[] units) {
        long m = 0;
        for (long u : units) {
            m = Math.max(m, u);
        }
        return m;
    }

    /** Multinomial split of {@code total} units at the planned weights, by successive binomials. */
    private long[] split(long total, SplittableRandom rng) {
        long[] out = new long[weights.length];
        long left = total;
        double wLeft = 1;
        for (int i = 0; i < weights.length - 1; i++) {
            double p = wLeft > 0 ? Math.min(1, weights[i] / wLeft) : 0;
            out[i] = binomial(left, p, rng);
            left -= out[i];
            wLeft -= weights[i];
        }
        out[weights.length - 1] = left;
        return out;
    }

    private static void draw(MetricModel m, double effect, long n, SplittableRandom rng, double[] sum, double[] sumSq,
                             int i) {
        if (n == 0) {
            return;
        }
        if (m.type() == MetricType.PROPORTION) {
            long x = binomial(n, m.rate() + effect, rng);
            sum[i] += x;
            sumSq[i] += x;
            return;
        }
        double mu = m.mean() + effect;
        double sd = m.sd();
        double s = n * mu + sd * Math.sqrt(n) * rng.nextGaussian();
        double chi = n == 1 ? 0 : Math.max(0, (n - 1) + Math.sqrt(2.0 * (n - 1)) * rng.nextGaussian());
        sum[i] += s;
        sumSq[i] += s * s / n + sd * sd * chi;
    }

    /** Binomial(n, p): inversion when n p (1 - p) &lt; 50, else the rounded normal approximation. */
    static long binomial(long n, double p, SplittableRandom rng) {
        if (n <= 0 || p <= 0) {
            return 0;
        }
        if (p >= 1) {
            return n;
        }
        if (p > 0.5) {
            return n - binomial(n, 1 - p, rng);
        }
        double var = n * p * (1 - p);
        if (var >= 50) {
            long x = Math.round(n * p + Math.sqrt(var) * rng.nextGaussian());
            return Math.max(0, Math.min(n, x));
        }
        double q = 1 - p;
        double ratio = p / q;
        double f = Math.pow(q, n);
        double u = rng.nextDouble();
        long x = 0;
        while (u > f && x < n) {
            u -= f;
            x++;
            f *= ratio * (n - x + 1) / x;
        }
        return x;
    }

    private Snapshot snapshot(int day, Instant at, long[] units, double[][] sum, double[][] sumSq) {
        Map<String, ArmCounts> arms = new LinkedHashMap<>();
        for (int a = 0; a < this.arms.length; a++) {
            Map<String, MetricSums> m = new LinkedHashMap<>();
            for (int i = 0; i < metrics.length; i++) {
                m.put(metrics[i].name(), MetricSums.of(sum[a][i], sumSq[a][i]));
            }
            arms.put(this.arms[a], new ArmCounts(units[a], m));
        }
        return new Snapshot(plan.experiment(), day + 1L, at, arms);
    }

    private Result summarise(List<Outcome> all) {
        long n = all.size();
        boolean gs = plan.primary().method() == Method.GROUP_SEQUENTIAL;
        int looks = gs ? plan.primary().looks().count() : all.stream().mapToInt(Outcome::look).max().orElse(1);
        long[] stop = new long[looks];
        long eff = 0;
        long fut = 0;
        long none = 0;
        long srm = 0;
        long[] alarms = new long[guardrails];
        double mean = 0;
        double meanSq = 0;
        long[] unitsSorted = new long[all.size()];
        int[] days = new int[all.size()];
        double overshoot = 0;
        long formal = 0;
        for (int i = 0; i < all.size(); i++) {
            Outcome o = all.get(i);
            stop[Math.min(looks, Math.max(1, o.look())) - 1]++;
            if (o.decision() == Decision.EFFICACY) {
                eff++;
            } else if (o.decision() == Decision.FUTILITY) {
                fut++;
            } else if (o.decision() == null) {
                none++;
            }
            srm += o.srmAlarm() ? 1 : 0;
            for (int g = 0; g < guardrails; g++) {
                alarms[g] += o.guardrailAlarm()[g] ? 1 : 0;
            }
            mean += o.units();
            meanSq += (double) o.units() * o.units();
            unitsSorted[i] = o.units();
            days[i] = o.day();
            overshoot += o.overshootSum();
            formal += o.formalLooks();
        }
        mean /= n;
        double sd = Math.sqrt(Math.max(0, meanSq / n - mean * mean) * n / Math.max(1, n - 1));
        double[] stopP = new double[looks];
        for (int k = 0; k < looks; k++) {
            stopP[k] = stop[k] / (double) n;
        }
        Arrays.sort(unitsSorted);
        Arrays.sort(days);
        long[] q = new long[Characteristics.QUANTILE_LEVELS.length];
        for (int j = 0; j < q.length; j++) {
            q[j] = unitsSorted[quantileIndex(n, Characteristics.QUANTILE_LEVELS[j])];
        }
        double pe = eff / (double) n;
        double pf = fut / (double) n;
        Characteristics c = new Characteristics(Characteristics.MONTE_CARLO, n, pe, Characteristics.binomialSe(pe, n), pf,
                Characteristics.binomialSe(pf, n), stopP, mean, sd / Math.sqrt(n), q);
        double[] ga = new double[guardrails];
        double[] gse = new double[guardrails];
        for (int g = 0; g < guardrails; g++) {
            ga[g] = alarms[g] / (double) n;
            gse[g] = Characteristics.binomialSe(ga[g], n);
        }
        double ps = srm / (double) n;
        return new Result(c, ga, gse, ps, Characteristics.binomialSe(ps, n), none / (double) n, days,
                formal == 0 ? Double.NaN : overshoot / formal);
    }

    /** Index of the empirical quantile: the smallest order statistic with at least a fraction q at or below it. */
    static int quantileIndex(long n, double q) {
        return (int) Math.max(0, Math.min(n - 1, (long) Math.ceil(q * n) - 1));
    }

    /** Snapshot times: the end of each day, UTC. */
    private record LocalDateClock(java.time.LocalDate start) {
        Instant endOfDay(int day) {
            return start.plusDays(day + 1L).atStartOfDay().toInstant(ZoneOffset.UTC);
        }
    }
}
