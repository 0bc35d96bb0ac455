package dev.stopline.service.alert;

import java.time.Duration;

/** Waits between attempts; tests pass one that records the wait and advances a test clock instead. */
@FunctionalInterface
public interface Sleeper {
    /** The real one: {@link Thread#sleep(long)}. */
    Sleeper SYSTEM = d -> Thread.sleep(d.toMillis());

    /** Waits {@code d} (non-negative). */
    void sleep(Duration d) throws InterruptedException;
}
