package dev.stopline.service.alert;

import java.time.Duration;
import java.util.SplittableRandom;

/**
 * When to try a webhook again: exponential backoff with "full jitter", bounded by a number of attempts and
 * by the time since the first attempt.
 *
 * <p>The wait before attempt {@code n + 1} (after {@code n} failed attempts) is uniform on
 * {@code [0, min(maxDelay, baseDelay * 2^(n-1))]}, in milliseconds. Full jitter spreads the retries of many
 * senders that failed together, so they do not hit a recovering endpoint in waves (M. Brooker, "Exponential
 * Backoff And Jitter", AWS Architecture Blog, 2015, which compares the variants by simulation).
 *
 * @param maxAttempts attempts per endpoint including the first, at least 1
 * @param baseDelay cap of the first wait, positive
 * @param maxDelay largest cap of any backoff wait, at least {@code baseDelay}
 * @param maxElapsed no attempt starts later than this after the first one, positive
 */
public record RetryPolicy(int maxAttempts, Duration baseDelay, Duration maxDelay, Duration maxElapsed) {

    /** Validates: the record component docs state each rule. */
    public RetryPolicy {
        if (maxAttempts < 1) {
            throw new IllegalArgumentException("max attempts " + maxAttempts + " must be >= 1");
        }
        positive("base delay", baseDelay);
        positive("max delay", maxDelay);
        positive("max elapsed", maxElapsed);
        if (maxDelay.compareTo(baseDelay) < 0) {
            throw new IllegalArgumentException("max delay " + maxDelay + " must be >= base delay " + baseDelay);
        }
    }

    /**
     * 8 attempts, first wait up to 1 s, waits capped at 5 min, nothing started after 1 h: a burst of quick
     * retries for a blip, then a few spaced ones for a deploy or restart of the receiver (common practice).
     */
    public static RetryPolicy defaults() {
        return new RetryPolicy(8, Duration.ofSeconds(1), Duration.ofMinutes(5), Duration.ofHours(1));
    }

    /** The cap {@code min(maxDelay, baseDelay * 2^(failures-1))} in ms, without overflow; failures >= 1. */
    public long capMillis(int failures) {
        if (failures < 1) {
            throw new IllegalArgumentException("failures " + failures + " must be >= 1");
        }
        long base = baseDelay.toMillis();
        long max = maxDelay.toMillis();
        int shift = failures - 1;
        if (shift >= 62 || base > (max >> shift)) {
            return max;
        }
        return Math.min(max, base << shift);
    }

    /** A full-jitter wait after {@code failures} failed attempts: uniform on {@code [0, capMillis]}. */
    public Duration backoff(int failures, SplittableRandom random) {
        return Duration.ofMillis(random.nextLong(capMillis(failures) + 1));
    }

    private static void positive(String name, Duration d) {
        if (d == null || d.isNegative() || d.isZero()) {
            throw new IllegalArgumentException(name + " " + d + " must be > 0");
        }
    }
}
