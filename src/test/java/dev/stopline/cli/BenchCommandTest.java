package dev.stopline.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.simulate.Parallel;
import dev.stopline.simulate.ZScaleEngine;
import dev.stopline.simulate.ZScalePlan;
import dev.stopline.stats.groupseq.Boundaries;
import java.lang.management.ManagementFactory;
import java.lang.management.ThreadMXBean;
import org.junit.jupiter.api.Test;

class BenchCommandTest {
    @Test
    void bench_printsEveryFigure() {
        CliRun r = SimulateCommandTest.run("bench", "--runs", "2", "--warmup", "1");
        assertEquals(0, r.code(), r.err());
        for (String s : new String[] {"K=5", "K=10", "K=100", "median", "p90", "trials/s", "trial-looks/s"}) {
            assertTrue(r.out().contains(s), s + " in " + r.out());
        }
    }

    @Test
    void zScaleEngine_100000TrialsOfAFiveLookPlan_takeUnderOneSecondOfCpuOnOneThread() {
        ThreadMXBean mx = ManagementFactory.getThreadMXBean();
        ZScalePlan plan = ZScalePlan.of(Boundaries.compute(BenchCommand.k5().withPower(0.8)), 60_000);
        Parallel one = Parallel.of(1, null);
        ZScaleEngine.run(plan, 0, 100_000, 1, one); // warm-up: JIT
        long best = Long.MAX_VALUE;
        double looks = 0;
        for (int i = 0; i < 3; i++) {
            long t0 = mx.getCurrentThreadCpuTime();
            double[] stop = ZScaleEngine.run(plan, 0, 100_000, 2 + i, one).stopLook();
            best = Math.min(best, mx.getCurrentThreadCpuTime() - t0);
            looks = 0;
            for (int k = 0; k < stop.length; k++) {
                looks += 100_000 * stop[k] * (k + 1);
            }
        }
        // The target: 100,000 trials of a 5-look plan in under 1 s; CPU time of one thread so a
        // busy shared machine does not decide the outcome; trial-looks count the looks actually simulated.
        assertTrue(best < 1_000_000_000L, "CPU time " + best / 1e6 + " ms");
        assertTrue(looks / (best / 1e9) >= 1e7, "trial-looks per CPU second " + looks / (best / 1e9));
    }
}
