package dev.stopline.stats;

/**
 * NaN-safe argument checks. Each test is written so that NaN fails it ({@code x > 0} is false for
 * NaN), and each message states the rule that was broken.
 */
public final class Check {
    private Check() {
    }

    /** Requires {@code 0 < p < 1}. */
    public static double openUnit(String name, double p) {
        if (p > 0 && p < 1) {
            return p;
        }
        throw new StatsException("%s %s not in (0, 1)", name, p);
    }

    /** Requires {@code 0 < t <= 1}. */
    public static double halfOpenUnit(String name, double t) {
        if (t > 0 && t <= 1) {
            return t;
        }
        throw new StatsException("%s %s not in (0, 1]", name, t);
    }

    /** Requires {@code x > 0} and finite. */
    public static double positive(String name, double x) {
        if (x > 0 && x < Double.POSITIVE_INFINITY) {
            return x;
        }
        throw new StatsException("%s %s must be finite and > 0", name, x);
    }

    /** Requires {@code x >= 0} and finite. */
    public static double nonNegative(String name, double x) {
        if (x >= 0 && x < Double.POSITIVE_INFINITY) {
            return x;
        }
        throw new StatsException("%s %s must be finite and >= 0", name, x);
    }

    /** Requires a finite value. */
    public static double finite(String name, double x) {
        if (Double.isFinite(x)) {
            return x;
        }
        throw new StatsException("%s %s must be finite", name, x);
    }

    /** Requires {@code lo <= k <= hi}. */
    public static int inRange(String name, int k, int lo, int hi) {
        if (k >= lo && k <= hi) {
            return k;
        }
        throw new StatsException("%s %d not in [%d, %d]", name, k, lo, hi);
    }
}
