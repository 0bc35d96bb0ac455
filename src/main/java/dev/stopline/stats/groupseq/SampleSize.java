package dev.stopline.stats.groupseq;

import dev.stopline.stats.Check;
import dev.stopline.stats.Normal;
import dev.stopline.stats.StatsException;

/**
 * Fixed-horizon and group-sequential sample sizes for a two-arm comparison, by the normal
 * approximation.
 *
 * <p>Every size here comes from one formula. With {@code z_a = z_{1 - alpha/sides}} (the fixed-test
 * critical value), {@code z_b = z_{power}}, a per-unit variance {@code v0} in the control arm and
 * {@code v1} in the treatment arm, an absolute difference {@code d} to detect and an allocation ratio
 * {@code k = n_treatment / n_control}, the fixed-horizon sizes are
 *
 * <pre>
 *   n_control   = (z_a + z_b)^2 * (v0 + v1 / k) / d^2
 *   n_treatment = k * n_control
 * </pre>
 *
 * which at a 50/50 split ({@code k = 1}) is the familiar {@code n = (z_a + z_b)^2 (v0 + v1) / d^2} per
 * arm. Sources of {@code v0, v1}:
 * <ul>
 *   <li>difference of proportions {@code p0 -> p1}: the <em>unpooled</em> Bernoulli variances
 *       {@code v0 = p0 (1 - p0)}, {@code v1 = p1 (1 - p1)} [1, ch. 4, without continuity
 *       correction, with the alternative variance on both terms]. Fleiss's form uses the pooled null variance on the
 *       {@code z_a} term; the two differ by well under 1% for the small lifts of online tests (a test
 *       shows 0.07% at 0.10 vs 0.12). The unpooled form was chosen because it is the variance the Wald
 *       z-statistic Stopline monitors actually uses.</li>
 *   <li>difference of means with a common standard deviation {@code sd}: {@code v0 = v1 = sd^2}, giving
 *       {@code n = 2 (z_a + z_b)^2 sd^2 / d^2 = 15.70 sd^2 / d^2} per arm at two-sided 0.05 and power 0.8.</li>
 *   <li>ratio metrics (e.g. orders per session, randomised by visitor): the delta-method per-unit variance
 *       of {@link RatioMoments#unitVariance()} [2] in both arms.</li>
 * </ul>
 *
 * <p>A group-sequential design with inflation factor {@code R = I_max / I_fixed} (from
 * {@link BoundarySet#inflationFactor()}) needs {@code ceil(R * n_fixed)} units per arm, where
 * {@code n_fixed} is the <em>unrounded</em> fixed size (rounding once, at the end, never loses a unit
 * twice); the cumulative size at information fraction {@code t_k} is {@code ceil(t_k * n_max)}.
 *
 * <p>References:
 * <ol>
 *   <li>Fleiss JL, Levin B, Paik MC (2003). Statistical Methods for Rates and Proportions, 3rd ed., Wiley,
 *       ch. 4.</li>
 *   <li>Deng A, Knoblich U, Lu J (2018). Applying the Delta Method in Metric Analytics: A Practical Guide
 *       with Novel Ideas. Proc. 24th ACM SIGKDD, 233-242. doi:10.1145/3219819.3219919</li>
 *   <li>Jennison C, Turnbull BW (2000). Group Sequential Methods with Applications to Clinical Trials,
 *       Chapman &amp; Hall/CRC, sec. 2.6 and 4.2 (inflation factor).</li>
 * </ol>
 */
public final class SampleSize {
    private final double alpha;
    private final int sides;
    private final double power;
    private final double allocationRatio;

    private SampleSize(double alpha, int sides, double power, double allocationRatio) {
        this.alpha = alpha;
        this.sides = sides;
        this.power = power;
        this.allocationRatio = allocationRatio;
    }

    /**
     * A 50/50 calculator.
     *
     * @param alpha total type I error (two-sided total when {@code sides = 2}), in (0, 1)
     * @param sides 1 or 2
     * @param power 1 - beta, in (0, 1) and above alpha / sides
     */
    public static SampleSize of(double alpha, int sides, double power) {
        Check.inRange("sides", sides, 1, 2);
        Check.openUnit("alpha", alpha);
        Check.openUnit("power", power);
        if (!(power > alpha / sides)) {
            throw new StatsException("power %s must exceed the one-sided alpha %s", power, alpha / sides);
        }
        return new SampleSize(alpha, sides, power, 1.0);
    }

    /** The same calculator with {@code k = n_treatment / n_control} (k = 1 is 50/50; k = 2 is a 1:2 split). */
    public SampleSize withAllocationRatio(double k) {
        Check.positive("allocation ratio", k);
        return new SampleSize(alpha, sides, power, k);
    }

    public double alpha() {
        return alpha;
    }

    public int sides() {
        return sides;
    }

    public double power() {
        return power;
    }

    public double allocationRatio() {
        return allocationRatio;
    }

    /** {@code (z_{1-alpha/sides} + z_{power})^2}, the squared drift of a fixed test with this power. */
    public double zSumSquared() {
        double z = Normal.upperQuantile(alpha / sides) + Normal.quantile(power);
        return z * z;
    }

    /** Proportions {@code baselineRate -> treatmentRate} with unpooled Bernoulli variances (see class doc). */
    public Arms proportions(double baselineRate, double treatmentRate) {
        Check.openUnit("baseline rate", baselineRate);
        Check.openUnit("treatment rate", treatmentRate);
        return generic(baselineRate * (1 - baselineRate), treatmentRate * (1 - treatmentRate),
                treatmentRate - baselineRate);
    }

    /** Means differing by {@code difference}, with a common standard deviation {@code sd} in both arms. */
    public Arms means(double sd, double difference) {
        Check.positive("standard deviation", sd);
        double v = sd * sd;
        return generic(v, v, difference);
    }

    /**
     * A ratio metric whose pilot data give {@code moments}; the treatment arm is assumed to share the
     * pilot's per-unit delta-method variance, and {@code difference} is absolute on the ratio scale (for a
     * relative lift {@code r} pass {@code r * moments.ratio()}).
     */
    public Arms ratio(RatioMoments moments, double difference) {
        double v = moments.unitVariance();
        return generic(v, v, difference);
    }

    /** The general formula: per-unit variances {@code v0, v1} and absolute difference {@code d}. */
    public Arms generic(double v0, double v1, double d) {
        Check.positive("control variance", v0);
        Check.positive("treatment variance", v1);
        Check.finite("difference", d);
        if (d == 0) {
            throw new StatsException("difference to detect must be non-zero");
        }
        double control = zSumSquared() * (v0 + v1 / allocationRatio) / (d * d);
        return new Arms(control, allocationRatio * control);
    }

    /** {@code ceil(R * fixedN)}: the maximum size of a group-sequential design with inflation factor R. */
    public static long groupSequential(double fixedN, double inflationFactor) {
        Check.positive("fixed sample size", fixedN);
        Check.positive("inflation factor", inflationFactor);
        return roundUp(inflationFactor * fixedN);
    }

    /** {@code ceil(t * maxN)}: cumulative units at information fraction {@code t}. */
    public static long atFraction(double t, long maxN) {
        Check.positive("information fraction", t);
        return roundUp(t * maxN);
    }

    /**
     * Rounds up, after removing relative floating-point noise below 1e-12 so that an exact 100 computed
     * as 100.00000000001 stays 100.
     */
    public static long roundUp(double n) {
        if (!(n < 9.0e15)) {
            throw new StatsException("sample size %s is too large to count", n);
        }
        return (long) Math.ceil(n - 1e-12 * Math.max(1.0, n));
    }

    /**
     * Unrounded fixed-horizon sizes of the two arms.
     *
     * @param control   units in the control arm
     * @param treatment units in the treatment arm ({@code k * control})
     */
    public record Arms(double control, double treatment) {
        public long controlUnits() {
            return roundUp(control);
        }

        public long treatmentUnits() {
            return roundUp(treatment);
        }

        /** The larger of the two arms, rounded up; at a 50/50 split this is "per arm". */
        public long perArmUnits() {
            return Math.max(controlUnits(), treatmentUnits());
        }
    }
}
