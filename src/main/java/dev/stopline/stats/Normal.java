package dev.stopline.stats;

import org.apache.commons.math3.special.Erf;

/**
 * The standard normal distribution, the currency of every sequential test in Stopline.
 *
 * <p>Thin, allocation-free wrappers so that hot loops (boundary recursion, simulation) do not build
 * distribution objects. The quantile uses Commons Math's {@code Erf.erfInv}, the cdf uses
 * {@code Erf.erfc} so that upper tails keep their relative precision far out (needed for the
 * O'Brien-Fleming-type spending function at small information fractions).
 */
public final class Normal {
    private static final double SQRT2 = Math.sqrt(2.0);
    private static final double INV_SQRT_2PI = 1.0 / Math.sqrt(2.0 * Math.PI);

    private Normal() {
    }

    /** Density phi(x). */
    public static double pdf(double x) {
        return INV_SQRT_2PI * Math.exp(-0.5 * x * x);
    }

    /** Lower tail Phi(x) = 0.5 erfc(-x / sqrt 2). */
    public static double cdf(double x) {
        return 0.5 * Erf.erfc(-x / SQRT2);
    }

    /** Upper tail 1 - Phi(x), computed without cancellation. */
    public static double upperTail(double x) {
        return 0.5 * Erf.erfc(x / SQRT2);
    }

    /** Quantile z_p with Phi(z_p) = p, for 0 &lt; p &lt; 1. */
    public static double quantile(double p) {
        Check.openUnit("probability", p);
        return upperQuantileInternal(1 - p, p);
    }

    /** Upper quantile z with 1 - Phi(z) = q, for 0 &lt; q &lt; 1. */
    public static double upperQuantile(double q) {
        Check.openUnit("tail probability", q);
        return upperQuantileInternal(q, 1 - q);
    }

    private static double upperQuantileInternal(double q, double p) {
        // erfcInv keeps precision for small q; for q near 1 use the lower tail by symmetry.
        return q < 0.5 ? SQRT2 * Erf.erfcInv(2 * q) : -SQRT2 * Erf.erfcInv(2 * p);
    }
}
