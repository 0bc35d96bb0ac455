package dev.stopline.bench;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.bench.BenchSupport.Scrape;
import java.util.Map;
import java.util.SplittableRandom;
import org.apache.commons.math3.stat.regression.SimpleRegression;
import org.junit.jupiter.api.Test;

/** The benchmark helpers whose figures end up in DEVELOPERS.md: the soak's slope and the metric sums. */
class BenchSupportTest {
    private static final String METRICS = String.join("\n",
            "# HELP stopline_snapshots_total",
            "# TYPE stopline_snapshots_total counter",
            "stopline_snapshots_total{outcome=\"evaluated\"} 49990.0",
            "stopline_snapshots_total{outcome=\"duplicate\"} 7.0",
            "stopline_dead_letters_total{reason=\"unparsable\"} 3.0",
            "jvm_memory_used_bytes{area=\"heap\",id=\"G1 Eden Space\"} 1048576.0",
            "jvm_memory_used_bytes{area=\"heap\",id=\"G1 Old Gen\"} 2097152.0",
            "jvm_memory_used_bytes{area=\"nonheap\",id=\"Metaspace\"} 9.9E7",
            "jvm_gc_live_data_size_bytes 5.24288E7",
            "jvm_gc_live_data_size_bytes_extra 1.0",
            "");

    @Test
    void slope_pointsOnALine_isItsGradient() {
        double[] minutes = {0, 0.5, 1, 1.5, 2};
        double[] mib = {40, 41, 42, 43, 44}; // 40 + 2 t by construction
        assertEquals(2.0, BenchSupport.slope(minutes, mib), 1e-12);
    }

    @Test
    void slope_noisySeries_agreesWithCommonsMathSimpleRegression() {
        SplittableRandom random = new SplittableRandom(42);
        double[] x = new double[20];
        double[] y = new double[20];
        SimpleRegression reference = new SimpleRegression();
        for (int i = 0; i < x.length; i++) {
            x[i] = 0.5 * (i + 1);
            y[i] = 50 + 0.3 * x[i] + random.nextGaussian();
            reference.addData(x[i], y[i]);
        }
        double expected = reference.getSlope(); // Commons Math SimpleRegression
        double actual = BenchSupport.slope(x, y);
        assertEquals(expected, actual, 1e-12 * Math.max(1, Math.abs(expected)),
                () -> "slope " + actual + " vs Commons Math " + expected);
    }

    @Test
    void slope_fewerThanTwoPointsOrOneTime_isNaN() {
        assertTrue(Double.isNaN(BenchSupport.slope(new double[] {1}, new double[] {5})));
        assertTrue(Double.isNaN(BenchSupport.slope(new double[] {1, 1}, new double[] {5, 6})));
    }

    @Test
    void scrape_sumsTheSamplesOfOneMetricByLabel() {
        Scrape s = new Scrape(METRICS);
        assertEquals(Map.of("evaluated", 49990.0, "duplicate", 7.0), s.snapshotOutcomes());
        assertEquals(3.0, s.deadLetters(), 0);
        assertEquals(50_000, s.processed()); // 49,990 + 7 + 3
        assertEquals(3 * 1048576.0, s.heapUsedBytes(), 0); // Eden + Old Gen, not the non-heap pool
        assertEquals(5.24288E7, s.liveAfterGcBytes(), 0); // the unlabelled sample, not the _extra metric
    }
}
