package dev.stopline.demo;

import dev.stopline.wire.ArmCounts;
import dev.stopline.wire.MetricSums;
import dev.stopline.wire.Snapshot;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.function.ToDoubleFunction;

/**
 * An invented online bookshop running three experiments, for the demo and the recorded streams in
 * {@code simulations/}. Invented data: nothing here is a measurement.
 *
 * <ul>
 *   <li>{@code checkout-redesign}: the one-page checkout lifts the order rate from 10.0% to 11.2%;
 *       page load is unchanged. Expected: an efficacy stop at an interim look.</li>
 *   <li>{@code recommendations-v2}: revenue per visitor barely moves, but the new model makes product
 *       pages about 14% slower. Expected: a page-load guardrail alert.</li>
 *   <li>{@code gift-wrap-upsell}: planned 50/50, but an assignment bug sends 53% of visitors to the
 *       control. Expected: a sample-ratio-mismatch alert within hours.</li>
 * </ul>
 *
 * Each {@link #tick()} is one simulated hour: every experiment gets that hour's visitors, each visitor's
 * metrics are drawn, and one cumulative snapshot per experiment is returned. Seeded: the same seed
 * always gives the same stream.
 */
public final class BookshopScenario {
    private final SplittableRandom random;
    private final Instant start;
    private final List<Experiment> experiments = new ArrayList<>();
    private int hour;

    private BookshopScenario(long seed, Instant start) {
        this.random = new SplittableRandom(seed);
        this.start = start;
        experiments.add(new Experiment("checkout-redesign", 2600, 0.5, List.of(
                Metric.bernoulli("orders", 0.100, 0.112),
                Metric.normal("page_load_ms", 1200, 1200, 300))));
        experiments.add(new Experiment("recommendations-v2", 3000, 0.5, List.of(
                Metric.revenue("revenue_per_visitor", 0.12, 20.0, 0.12, 20.5),
                Metric.normal("page_load_ms", 1100, 1250, 280),
                Metric.bernoulli("error_rate", 0.010, 0.010))));
        experiments.add(new Experiment("gift-wrap-upsell", 1800, 0.53, List.of(
                Metric.bernoulli("gift_wrap_orders", 0.040, 0.046),
                Metric.bernoulli("orders", 0.100, 0.100))));
    }

    /** A scenario whose first hour ends at {@code start} plus one hour. */
    public static BookshopScenario seeded(long seed, Instant start) {
        return new BookshopScenario(seed, start);
    }

    /** The experiment ids, in the order {@link #tick()} returns their snapshots. */
    public List<String> experimentIds() {
        return experiments.stream().map(e -> e.id).toList();
    }

    /** Simulates the next hour and returns one cumulative snapshot per experiment. */
    public List<Snapshot> tick() {
        hour++;
        Instant at = start.plus(Duration.ofHours(hour));
        List<Snapshot> out = new ArrayList<>();
        for (Experiment e : experiments) {
            out.add(e.advance(random, hour, at));
        }
        return out;
    }

    private record Metric(String name, ToDoubleFunction<SplittableRandom> control,
                          ToDoubleFunction<SplittableRandom> treatment) {
        static Metric bernoulli(String name, double pc, double pt) {
            return new Metric(name, r -> r.nextDouble() < pc ? 1 : 0, r -> r.nextDouble() < pt ? 1 : 0);
        }

        static Metric normal(String name, double mc, double mt, double sd) {
            return new Metric(name, r -> Math.max(1, mc + sd * gaussian(r)), r -> Math.max(1, mt + sd * gaussian(r)));
        }

        /** Most visitors buy nothing; a buyer spends an exponential amount. */
        static Metric revenue(String name, double buyC, double meanC, double buyT, double meanT) {
            return new Metric(name, r -> r.nextDouble() < buyC ? -meanC * Math.log(1 - r.nextDouble()) : 0,
                    r -> r.nextDouble() < buyT ? -meanT * Math.log(1 - r.nextDouble()) : 0);
        }
    }

    private static double gaussian(SplittableRandom r) {
        // Box-Muller; one value per call keeps the stream simple to reason about
        double u = 1 - r.nextDouble();
        double v = r.nextDouble();
        return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
    }

    private static final class Experiment {
        final String id;
        final int visitorsPerHour;
        final double controlShare;
        final List<Metric> metrics;
        final long[] units = new long[2];
        final double[][] sums;
        final double[][] squares;

        Experiment(String id, int visitorsPerHour, double controlShare, List<Metric> metrics) {
            this.id = id;
            this.visitorsPerHour = visitorsPerHour;
            this.controlShare = controlShare;
            this.metrics = metrics;
            this.sums = new double[2][metrics.size()];
            this.squares = new double[2][metrics.size()];
        }

        Snapshot advance(SplittableRandom r, int hour, Instant at) {
            // a daily rhythm: busier in the evening
            double rhythm = 1 + 0.35 * Math.sin(2 * Math.PI * ((hour % 24) - 12) / 24.0);
            int visitors = (int) Math.round(visitorsPerHour * rhythm);
            for (int i = 0; i < visitors; i++) {
                int arm = r.nextDouble() < controlShare ? 0 : 1;
                units[arm]++;
                for (int m = 0; m < metrics.size(); m++) {
                    Metric metric = metrics.get(m);
                    double x = arm == 0 ? metric.control.applyAsDouble(r) : metric.treatment.applyAsDouble(r);
                    sums[arm][m] += x;
                    squares[arm][m] += x * x;
                }
            }
            Map<String, ArmCounts> arms = new LinkedHashMap<>();
            arms.put("control", counts(0));
            arms.put("treatment", counts(1));
            return new Snapshot(id, hour, at, arms);
        }

        private ArmCounts counts(int arm) {
            Map<String, MetricSums> m = new LinkedHashMap<>();
            for (int i = 0; i < metrics.size(); i++) {
                m.put(metrics.get(i).name, MetricSums.of(sums[arm][i], squares[arm][i]));
            }
            return new ArmCounts(units[arm], m);
        }
    }
}
