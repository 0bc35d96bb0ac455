package dev.stopline.service.broker;

import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.time.Duration;
import java.util.concurrent.CountDownLatch;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicBoolean;

import org.junit.jupiter.api.Test;

class BoundedShutdownTest {
    /** Scheduling slack on a busy 2-core machine (common practice for timing assertions). */
    private static final long SLACK_MS = 1_500;

    @Test
    void run_hangingAction_isAbandonedAtTheLimit() throws Exception {
        CountDownLatch never = new CountDownLatch(1);
        CountDownLatch entered = new CountDownLatch(1);
        long t0 = System.nanoTime();
        boolean done = BoundedShutdown.run("hang", () -> {
            entered.countDown();
            try {
                never.await();
            } catch (InterruptedException e) {
                Thread.currentThread().interrupt();
            }
        }, Duration.ofMillis(300));
        long ms = TimeUnit.NANOSECONDS.toMillis(System.nanoTime() - t0);

        assertFalse(done, "a hanging action is reported as abandoned");
        assertTrue(entered.await(1, TimeUnit.SECONDS), "the action did run");
        assertTrue(ms >= 300 && ms < 300 + SLACK_MS, "waited " + ms + " ms for a 300 ms limit");
        never.countDown(); // let the abandoned thread end
    }

    @Test
    void run_quickAction_returnsAsSoonAsItEnds() {
        AtomicBoolean ran = new AtomicBoolean();
        long t0 = System.nanoTime();
        boolean done = BoundedShutdown.run("quick", () -> ran.set(true), Duration.ofSeconds(8));
        long ms = TimeUnit.NANOSECONDS.toMillis(System.nanoTime() - t0);

        assertTrue(done);
        assertTrue(ran.get());
        assertTrue(ms < SLACK_MS, "a quick action must not wait for the 8 s limit, took " + ms + " ms");
    }

    @Test
    void run_throwingAction_countsAsFinished() {
        boolean done = BoundedShutdown.run("throws", () -> {
            throw new IllegalStateException("broken on purpose");
        }, Duration.ofSeconds(2));
        assertTrue(done, "a failure is logged, not hidden as a hang");
    }
}
