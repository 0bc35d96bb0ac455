package dev.stopline.simulate;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.dataformat.yaml.YAMLFactory;
import dev.stopline.stats.StatsException;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.DayOfWeek;
import java.time.LocalDate;
import java.time.format.DateTimeParseException;
import java.util.ArrayList;
import java.util.Iterator;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.SplittableRandom;

/**
 * How many units (all arms together) enter the experiment per day, and what the guardrail metrics
 * look like at baseline. Immutable. Two file forms:
 *
 * <p>YAML (or JSON), the parametric form:
 * <pre>
 * start: 2027-03-01          # first day of the experiment (default: 2027-01-04, a Monday)
 * unitsPerDay: 9000          # average units per day over a week, all arms together
 * weekly: [1.0, 0.95, 0.95, 1.0, 1.05, 1.2, 0.85]   # Monday..Sunday multipliers (default: all 1)
 * variation: 0.10            # day-to-day coefficient of variation of the traffic (default 0)
 * metrics:                   # baselines the plan does not give (guardrails)
 *   page_load_ms: {mean: 1850, sd: 900}
 *   error_rate: {rate: 0.004}
 * </pre>
 * Expected units on day d are {@code unitsPerDay * weekly[dayOfWeek] / mean(weekly)}, times a
 * log-normal factor with mean 1 and the given coefficient of variation (sigma^2 = ln(1 + cv^2)).
 *
 * <p>CSV, the explicit form: a header {@code date,units} and one row per day with its expected units;
 * the table repeats cyclically after its last row; no variation, no metric baselines.
 */
public final class TrafficForecast {
    /** Default first day when a forecast gives none. */
    public static final LocalDate DEFAULT_START = LocalDate.of(2027, 1, 4);

    private final LocalDate start;
    private final double[] cycle;
    private final boolean weeklyCycle;
    private final double variation;
    private final Map<String, MetricBaseline> metrics;

    private TrafficForecast(LocalDate start, double[] cycle, boolean weeklyCycle, double variation,
                            Map<String, MetricBaseline> metrics) {
        this.start = start;
        this.cycle = cycle;
        this.weeklyCycle = weeklyCycle;
        this.variation = variation;
        this.metrics = Map.copyOf(metrics);
    }

    /**
     * A baseline for a metric: a rate for a proportion, mean and sd for a mean.
     *
     * @param rate control rate (proportion), NaN otherwise
     * @param mean control mean (mean), NaN otherwise
     * @param sd   per-unit standard deviation (mean), NaN otherwise
     */
    public record MetricBaseline(double rate, double mean, double sd) {
        public static MetricBaseline ofRate(double rate) {
            return new MetricBaseline(rate, Double.NaN, Double.NaN);
        }

        public static MetricBaseline ofMean(double mean, double sd) {
            return new MetricBaseline(Double.NaN, mean, sd);
        }
    }

    /** A weekly forecast: {@code weekly} holds Monday..Sunday multipliers (normalised to mean 1). */
    public static TrafficForecast weekly(LocalDate start, double unitsPerDay, double[] weekly, double variation,
                                         Map<String, MetricBaseline> metrics) {
        if (!(unitsPerDay > 0 && unitsPerDay < 1e12)) {
            throw new StatsException("unitsPerDay %s must be > 0 and < 1e12", unitsPerDay);
        }
        if (weekly.length != 7) {
            throw new StatsException("weekly must have 7 multipliers (Monday..Sunday), got %d", weekly.length);
        }
        double sum = 0;
        for (double w : weekly) {
            if (!(w >= 0 && w < 100)) {
                throw new StatsException("weekly multiplier %s must be in [0, 100)", w);
            }
            sum += w;
        }
        if (!(sum > 0)) {
            throw new StatsException("weekly multipliers must not all be 0");
        }
        if (!(variation >= 0 && variation <= 2)) {
            throw new StatsException("variation %s must be in [0, 2]", variation);
        }
        double[] c = new double[7];
        for (int i = 0; i < 7; i++) {
            c[i] = unitsPerDay * weekly[i] * 7 / sum;
        }
        return new TrafficForecast(start, c, true, variation, metrics);
    }

    /** Reads a forecast: {@code .csv} as the explicit form, anything else as YAML/JSON. */
    public static TrafficForecast read(Path file) throws IOException {
        String text = Files.readString(file, StandardCharsets.UTF_8);
        String name = file.getFileName().toString().toLowerCase(Locale.ROOT);
        return name.endsWith(".csv") ? parseCsv(text) : parseYaml(text);
    }

    static TrafficForecast parseYaml(String yaml) throws IOException {
        JsonNode root = new ObjectMapper(new YAMLFactory()).readTree(yaml);
        if (root == null || !root.isObject()) {
            throw new StatsException("traffic forecast must be a mapping with unitsPerDay");
        }
        for (Iterator<String> it = root.fieldNames(); it.hasNext(); ) {
            String k = it.next();
            if (!List.of("start", "unitsPerDay", "weekly", "variation", "metrics").contains(k)) {
                throw new StatsException("unknown traffic key '%s' (known: start, unitsPerDay, weekly, variation, metrics)", k);
            }
        }
        LocalDate start = root.has("start") ? date(root.get("start").asText()) : DEFAULT_START;
        if (!root.has("unitsPerDay") || !root.get("unitsPerDay").isNumber()) {
            throw new StatsException("traffic forecast needs a number unitsPerDay");
        }
        double[] weekly = {1, 1, 1, 1, 1, 1, 1};
        if (root.has("weekly")) {
            JsonNode w = root.get("weekly");
            if (!w.isArray() || w.size() != 7) {
                throw new StatsException("weekly must be a list of 7 numbers (Monday..Sunday)");
            }
            for (int i = 0; i < 7; i++) {
                weekly[i] = w.get(i).asDouble(Double.NaN);
            }
        }
        double variation = root.has("variation") ? root.get("variation").asDouble(Double.NaN) : 0;
        Map<String, MetricBaseline> metrics = new LinkedHashMap<>();
        if (root.has("metrics")) {
            for (Iterator<Map.Entry<String, JsonNode>> it = root.get("metrics").fields(); it.hasNext(); ) {
                Map.Entry<String, JsonNode> e = it.next();
                metrics.put(e.getKey(), baseline(e.getKey(), e.getValue()));
            }
        }
        return weekly(start, root.get("unitsPerDay").asDouble(), weekly, variation, metrics);
    }

    private static MetricBaseline baseline(String name, JsonNode n) {
        if (n.has("rate")) {
            double r = n.get("rate").asDouble(Double.NaN);
            if (!(r > 0 && r < 1)) {
                throw new StatsException("metrics.%s.rate %s not in (0, 1)", name, r);
            }
            return MetricBaseline.ofRate(r);
        }
        double mean = n.path("mean").asDouble(Double.NaN);
        double sd = n.path("sd").asDouble(Double.NaN);
        if (!Double.isFinite(mean) || !(sd > 0 && sd < Double.POSITIVE_INFINITY)) {
            throw new StatsException("metrics.%s needs rate, or mean and sd > 0", name);
        }
        return MetricBaseline.ofMean(mean, sd);
    }

    static TrafficForecast parseCsv(String csv) {
        List<double[]> rows = new ArrayList<>();
        LocalDate start = null;
        String[] lines = csv.split("\\R");
        for (int i = 0; i < lines.length; i++) {
            String line = lines[i].trim();
            if (line.isEmpty() || line.startsWith("#") || (i == 0 && line.toLowerCase(Locale.ROOT).startsWith("date"))) {
                continue;
            }
            String[] f = line.split(",");
            if (f.length != 2) {
                throw new StatsException("traffic CSV line %d: expected 'date,units', got '%s'", i + 1, line);
            }
            LocalDate d = date(f[0].trim());
            if (start == null) {
                start = d;
            } else if (!d.equals(start.plusDays(rows.size()))) {
                throw new StatsException("traffic CSV line %d: dates must be consecutive days, expected %s", i + 1,
                        start.plusDays(rows.size()));
            }
            double u;
            try {
                u = Double.parseDouble(f[1].trim());
            } catch (NumberFormatException e) {
                throw new StatsException("traffic CSV line %d: units '%s' is not a number", i + 1, f[1].trim());
            }
            if (!(u >= 0 && u < 1e12)) {
                throw new StatsException("traffic CSV line %d: units %s must be in [0, 1e12)", i + 1, u);
            }
            rows.add(new double[] {u});
        }
        if (rows.isEmpty()) {
            throw new StatsException("traffic CSV has no rows of 'date,units'");
        }
        double[] c = rows.stream().mapToDouble(r -> r[0]).toArray();
        if (!(java.util.Arrays.stream(c).sum() > 0)) {
            throw new StatsException("traffic CSV units must not all be 0");
        }
        return new TrafficForecast(start, c, false, 0, Map.of());
    }

    private static LocalDate date(String s) {
        try {
            return LocalDate.parse(s);
        } catch (DateTimeParseException e) {
            throw new StatsException("date '%s' is not an ISO date (yyyy-mm-dd)", s);
        }
    }

    /** Expected units on day d (0 = start). */
    public double expectedUnits(int day) {
        if (weeklyCycle) {
            DayOfWeek dow = start.plusDays(day).getDayOfWeek();
            return cycle[dow.getValue() - 1];
        }
        return cycle[day % cycle.length];
    }

    /** A random day's units: expected units times a log-normal factor with mean 1 and cv {@code variation}. */
    public long draw(int day, SplittableRandom rng) {
        double e = expectedUnits(day);
        if (variation > 0) {
            double s2 = Math.log1p(variation * variation);
            e *= Math.exp(Math.sqrt(s2) * rng.nextGaussian() - 0.5 * s2);
        }
        return Math.round(e);
    }

    /** Average expected units per day over one cycle. */
    public double meanUnitsPerDay() {
        double s = 0;
        for (double c : cycle) {
            s += c;
        }
        return s / cycle.length;
    }

    public LocalDate start() {
        return start;
    }

    public double variation() {
        return variation;
    }

    public Map<String, MetricBaseline> metrics() {
        return metrics;
    }
}
