package dev.stopline.simulate;

import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.monitor.PlanSizing;
import dev.stopline.plan.Method;
import dev.stopline.plan.Plan;
import dev.stopline.stats.groupseq.SampleSize;
import java.time.LocalDate;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;

/**
 * When the looks will happen: for each planned look (a group-sequential primary) or for the maximum
 * size (other methods), the day on which the cumulative traffic first reaches its information
 * fraction, over seeded traffic paths drawn from the {@link TrafficForecast}. Arms are taken at their
 * planned shares of the day's units (the random split moves a look by far less than a day). A look's
 * date is the day whose counts complete it; "if the experiment gets that far".
 */
public final class LookCalendar {
    /** Give up on a path after this many days (it then counts as reaching its looks on the last day). */
    static final int MAX_DAYS = 100_000;

    private final LocalDate start;
    private final List<Entry> entries;
    private final int[][] days; // [path][look]

    /**
     * One look's dates.
     *
     * @param label       "look k" or "maximum size"
     * @param fraction    planned information fraction
     * @param unitsPerArm units per arm (largest arm) at that fraction
     * @param expected    date of the mean day
     * @param early       10% quantile
     * @param late        90% quantile
     */
    public record Entry(String label, double fraction, long unitsPerArm, LocalDate expected, LocalDate early,
                        LocalDate late) {
    }

    /**
     * The decision date at one effect.
     *
     * @param expected date of the mean day
     * @param early    10% quantile
     * @param median   50% quantile
     * @param late     90% quantile
     */
    public record DecisionDates(LocalDate expected, LocalDate early, LocalDate median, LocalDate late) {
    }

    private LookCalendar(LocalDate start, List<Entry> entries, int[][] days) {
        this.start = start;
        this.entries = List.copyOf(entries);
        this.days = days;
    }

    /** The calendar of a monitor's plan under a forecast, from {@code paths} seeded traffic paths. */
    public static LookCalendar of(ExperimentMonitor monitor, TrafficForecast traffic, long seed, int paths) {
        Plan plan = monitor.plan();
        double[] t = plan.primary().method() == Method.GROUP_SEQUENTIAL
                ? plan.primary().looks().fractions().stream().mapToDouble(Double::doubleValue).toArray()
                : new double[] {1.0};
        double wc = plan.allocation().get(plan.control());
        double wt = plan.allocation().entrySet().stream().filter(e -> !e.getKey().equals(plan.control()))
                .mapToDouble(java.util.Map.Entry::getValue).findFirst().orElseThrow();
        PlanSizing sizing = monitor.sizing();
        SplittableRandom rng = new SplittableRandom(seed ^ 0xCA1E4DA5L);
        int[][] days = new int[paths][t.length];
        for (int p = 0; p < paths; p++) {
            double total = 0;
            int next = 0;
            for (int day = 0; day < MAX_DAYS && next < t.length; day++) {
                total += traffic.draw(day, rng);
                double f = sizing.informationFraction(Math.round(total * wc), Math.round(total * wt));
                while (next < t.length && f >= t[next] * (1 - 1e-12)) {
                    days[p][next++] = day;
                }
            }
            for (; next < t.length; next++) {
                days[p][next] = MAX_DAYS - 1;
            }
        }
        List<Entry> entries = new ArrayList<>();
        boolean gs = t.length > 1 || plan.primary().method() == Method.GROUP_SEQUENTIAL;
        for (int k = 0; k < t.length; k++) {
            int[] col = new int[paths];
            double mean = 0;
            for (int p = 0; p < paths; p++) {
                col[p] = days[p][k];
                mean += col[p];
            }
            java.util.Arrays.sort(col);
            LocalDate s = traffic.start();
            entries.add(new Entry(gs ? "look " + (k + 1) : "maximum size", t[k],
                    SampleSize.atFraction(t[k], sizing.maxUnitsPerArm()), s.plusDays(Math.round(mean / paths)),
                    s.plusDays(col[DataLevelEngine.quantileIndex(paths, 0.1)]),
                    s.plusDays(col[DataLevelEngine.quantileIndex(paths, 0.9)])));
        }
        return new LookCalendar(traffic.start(), entries, days);
    }

    public List<Entry> entries() {
        return entries;
    }

    public LocalDate start() {
        return start;
    }

    /** Decision dates when the analysis stops at look k with probability {@code stopLook[k]} (independent of traffic). */
    public DecisionDates decision(double[] stopLook) {
        int maxDay = 0;
        for (int[] row : days) {
            maxDay = Math.max(maxDay, row[row.length - 1]);
        }
        double[] w = new double[maxDay + 1];
        double mean = 0;
        int looks = Math.min(stopLook.length, days[0].length);
        for (int[] row : days) {
            for (int k = 0; k < looks; k++) {
                double p = stopLook[k] / days.length;
                w[row[k]] += p;
                mean += p * row[k];
            }
        }
        return new DecisionDates(start.plusDays(Math.round(mean)), start.plusDays(quantile(w, 0.1)),
                start.plusDays(quantile(w, 0.5)), start.plusDays(quantile(w, 0.9)));
    }

    /** Decision dates from the stopping days of simulated trials (sorted day indices). */
    public static DecisionDates fromDays(LocalDate start, int[] sortedDays) {
        int n = sortedDays.length;
        double mean = 0;
        for (int d : sortedDays) {
            mean += d;
        }
        return new DecisionDates(start.plusDays(Math.round(mean / n)),
                start.plusDays(sortedDays[DataLevelEngine.quantileIndex(n, 0.1)]),
                start.plusDays(sortedDays[DataLevelEngine.quantileIndex(n, 0.5)]),
                start.plusDays(sortedDays[DataLevelEngine.quantileIndex(n, 0.9)]));
    }

    private static int quantile(double[] w, double q) {
        double total = 0;
        for (double x : w) {
            total += x;
        }
        double cum = 0;
        for (int d = 0; d < w.length; d++) {
            cum += w[d];
            if (cum >= q * total - 1e-12) {
                return d;
            }
        }
        return w.length - 1;
    }
}
