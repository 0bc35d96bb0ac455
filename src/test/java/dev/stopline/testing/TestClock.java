package dev.stopline.testing;

import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import java.time.ZoneId;
import java.time.ZoneOffset;

/** A UTC clock that moves only when a test says so (thread-safe). */
public final class TestClock extends Clock {
    private volatile Instant now;

    private TestClock(Instant start) {
        this.now = start;
    }

    /** A clock standing at {@code start}. */
    public static TestClock at(Instant start) {
        return new TestClock(start);
    }

    /** Moves the clock forward by {@code d}. */
    public synchronized void advance(Duration d) {
        now = now.plus(d);
    }

    @Override
    public Instant instant() {
        return now;
    }

    @Override
    public ZoneId getZone() {
        return ZoneOffset.UTC;
    }

    @Override
    public Clock withZone(ZoneId zone) {
        throw new UnsupportedOperationException("TestClock is UTC only");
    }
}
