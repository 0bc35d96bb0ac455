package dev.stopline.stats.groupseq;

/**
 * Fast standard normal tails for the inner loops of the boundary recursion.
 *
 * <p>Hart's (1968) double-precision rational approximation as transcribed by West (2005): for
 * {@code |x| < 7.071} the tail is {@code exp(-x^2/2) P(|x|) / Q(|x|)} with degree 6 and 7
 * polynomials, beyond it a 4-term continued fraction; 0 beyond 37. It needs one {@code exp} and no
 * iteration, whereas {@code dev.stopline.stats.Normal} goes through Commons Math's
 * {@code Erf.erfc} (an incomplete-gamma continued fraction). Why it exists: the efficacy root finder
 * evaluates one tail per grid point per iteration; measured on this machine the whole K = 100 design
 * spent most of its time in {@code Erf.erfc}. Agreement with Commons Math is asserted in
 * {@code NormalTailTest} (relative error of the upper tail below 1e-12 for x &lt;= 4; beyond, where the
 * tail is below 3e-5, the relative error grows to about 9e-9 near x = 8 and falls again: harmless
 * for boundaries, where it moves a bound by less than 1e-8 on the z scale).
 *
 * <p>References: Hart JF et al. (1968) Computer Approximations, Wiley, algorithm 5666;
 * West G (2005) Better approximations to cumulative normal functions. Wilmott Magazine 70-76.
 */
final class NormalTail {
    private static final double INV_SQRT_2PI = 1.0 / Math.sqrt(2 * Math.PI);
    private static final double SQRT_2PI = Math.sqrt(2 * Math.PI);

    private NormalTail() {
    }

    /** Upper tail 1 - Phi(x). */
    static double upper(double x) {
        return x >= 0 ? tail(x) : 1 - tail(-x);
    }

    /** Lower tail Phi(x). */
    static double lower(double x) {
        return x <= 0 ? tail(-x) : 1 - tail(x);
    }

    /** Density phi(x). */
    static double pdf(double x) {
        return INV_SQRT_2PI * Math.exp(-0.5 * x * x);
    }

    /** 1 - Phi(y) for y &gt;= 0 (NaN propagates). */
    private static double tail(double y) {
        if (y > 37) {
            return 0;
        }
        return tailGivenExp(y, Math.exp(-0.5 * y * y));
    }

    /**
     * 1 - Phi(y) for 0 &lt;= y &lt;= 37 given {@code e = exp(-y^2 / 2)}: callers that also need the
     * density phi(y) = e / sqrt(2 pi) (the slope of a tail) pay for one exponential, not two.
     */
    static double tailGivenExp(double y, double e) {
        if (y < 7.07106781186547) {
            double p = 3.52624965998911E-02;
            p = p * y + 0.700383064443688;
            p = p * y + 6.37396220353165;
            p = p * y + 33.912866078383;
            p = p * y + 112.079291497871;
            p = p * y + 221.213596169931;
            p = p * y + 220.206867912376;
            double q = 8.83883476483184E-02;
            q = q * y + 1.75566716318264;
            q = q * y + 16.064177579207;
            q = q * y + 86.7807322029461;
            q = q * y + 296.564248779674;
            q = q * y + 637.333633378831;
            q = q * y + 793.826512519948;
            q = q * y + 440.413735824752;
            return e * p / q;
        }
        double c = y + 0.65;
        c = y + 4 / c;
        c = y + 3 / c;
        c = y + 2 / c;
        c = y + 1 / c;
        return e / c / SQRT_2PI;
    }

    /**
     * Rough upper quantile z with 1 - Phi(z) ~ q, 0 &lt; q &lt;= 0.5, absolute error below 4.5e-4
     * (Abramowitz &amp; Stegun 1964, formula 26.2.23). Only for starting guesses of root finders:
     * Commons Math's {@code erfcInv} cost about a fifth of a K = 10 futility design when used here.
     */
    static double roughUpperQuantile(double q) {
        double t = Math.sqrt(-2 * Math.log(q));
        return t - (2.515517 + t * (0.802853 + t * 0.010328)) / (1 + t * (1.432788 + t * (0.189269 + t * 0.001308)));
    }
}
