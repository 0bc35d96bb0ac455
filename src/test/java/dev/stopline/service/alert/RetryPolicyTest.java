package dev.stopline.service.alert;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.time.Duration;
import java.util.SplittableRandom;

import org.junit.jupiter.api.Test;

class RetryPolicyTest {
    private final RetryPolicy p = new RetryPolicy(10, Duration.ofMillis(500), Duration.ofSeconds(30),
            Duration.ofHours(1));

    @Test
    void cap_doublesPerFailure_untilMaxDelay() {
        // 500 * 2^(n-1): 500, 1000, 2000, ... then min with 30 000 (the definition in the Javadoc)
        assertEquals(500, p.capMillis(1));
        assertEquals(1_000, p.capMillis(2));
        assertEquals(16_000, p.capMillis(6));
        assertEquals(30_000, p.capMillis(7)); // 32 000 capped
        assertEquals(30_000, p.capMillis(1_000), "no overflow for absurd failure counts");
    }

    @Test
    void backoff_isWithinZeroAndCap_andUniformOnAverage() {
        SplittableRandom r = new SplittableRandom(20261201L);
        int n = 20_000;
        long cap = p.capMillis(4); // 4 000 ms
        double sum = 0;
        for (int i = 0; i < n; i++) {
            long ms = p.backoff(4, r).toMillis();
            assertTrue(ms >= 0 && ms <= cap, "wait " + ms + " outside [0, " + cap + "]");
            sum += ms;
        }
        // uniform on {0..cap}: mean cap/2, sd cap/sqrt(12); mean within 3 standard errors
        double mean = sum / n;
        double se = cap / Math.sqrt(12) / Math.sqrt(n);
        assertTrue(Math.abs(mean - cap / 2.0) < 3 * se, "mean " + mean + " vs " + cap / 2.0 + ", 3 SE " + 3 * se);
    }

    @Test
    void backoff_withTheSameSeed_isReproducible() {
        SplittableRandom a = new SplittableRandom(7);
        SplittableRandom b = new SplittableRandom(7);
        for (int i = 1; i <= 8; i++) {
            assertEquals(p.backoff(i, a), p.backoff(i, b));
        }
    }

    @Test
    void invalidPolicies_areRejectedWithTheRule() {
        IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
                () -> new RetryPolicy(0, Duration.ofSeconds(1), Duration.ofSeconds(2), Duration.ofSeconds(3)));
        assertTrue(e.getMessage().contains(">= 1"), e.getMessage());
        assertThrows(IllegalArgumentException.class,
                () -> new RetryPolicy(3, Duration.ofSeconds(5), Duration.ofSeconds(2), Duration.ofSeconds(3)));
        assertThrows(IllegalArgumentException.class,
                () -> new RetryPolicy(3, Duration.ZERO, Duration.ofSeconds(2), Duration.ofSeconds(3)));
    }
}
