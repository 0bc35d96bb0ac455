package dev.stopline.stats.estimate;

import dev.stopline.stats.Check;
import dev.stopline.stats.StatsException;
import java.util.Arrays;
import org.apache.commons.math3.distribution.ChiSquaredDistribution;

/**
 * Sample-ratio mismatch: Pearson's (1900) chi-square goodness-of-fit test of the observed units per arm
 * against the planned allocation weights.
 *
 * <pre>
 *   X^2 = sum_i (O_i - E_i)^2 / E_i,   E_i = w_i N,   N = sum_i O_i,   df = k - 1,
 *   p = P(chi^2_df >= X^2)
 * </pre>
 *
 * <p>A mismatch means the assignment or logging is broken, so every other result of the experiment is
 * suspect. The default flag threshold {@value #DEFAULT_THRESHOLD} is common practice: the check runs at
 * every look of a long experiment, and a strict threshold keeps false alarms rare.
 *
 * <p>The p-value is {@code 1 - F(X^2)} with Commons Math's {@link ChiSquaredDistribution}, the same
 * computation as {@code org.apache.commons.math3.stat.inference.ChiSquareTest}; it has absolute
 * accuracy near 1e-16, which is all a flag at 0.001 needs (tiny p-values are not relatively accurate).
 *
 * <p>Immutable; options as withers: {@code SampleRatioCheck.withWeights(0.5, 0.5).withThreshold(1e-4)}.
 */
public final class SampleRatioCheck {
    /** Common practice: flag a mismatch at p below 0.001. */
    public static final double DEFAULT_THRESHOLD = 0.001;
    /** Allowed distance of the sum of the weights from 1. */
    static final double WEIGHT_SUM_TOLERANCE = 1e-9;

    private final double[] weights;
    private final double threshold;
    private final ChiSquaredDistribution chiSquared;

    private SampleRatioCheck(double[] weights, double threshold) {
        this.weights = weights;
        this.threshold = threshold;
        // null generator: no random source is built, we only evaluate the cdf
        this.chiSquared = new ChiSquaredDistribution(null, weights.length - 1);
    }

    /**
     * A check against the planned allocation weights, one per arm.
     *
     * @throws StatsException unless there are at least 2 weights, each finite and > 0, summing to 1
     *     within 1e-9
     */
    public static SampleRatioCheck withWeights(double... weights) {
        if (weights.length < 2) {
            throw new StatsException("allocation needs at least 2 arms, got %d", weights.length);
        }
        double total = 0;
        for (int i = 0; i < weights.length; i++) {
            total += Check.positive("weight of arm " + i, weights[i]);
        }
        if (!(Math.abs(total - 1) <= WEIGHT_SUM_TOLERANCE)) {
            throw new StatsException("allocation weights %s sum to %s, must sum to 1 within %s",
                    Arrays.toString(weights), total, WEIGHT_SUM_TOLERANCE);
        }
        return new SampleRatioCheck(weights.clone(), DEFAULT_THRESHOLD);
    }

    /** Equal allocation over {@code arms} arms (common practice: 50/50 for two). */
    public static SampleRatioCheck equalSplit(int arms) {
        Check.inRange("arms", arms, 2, Integer.MAX_VALUE);
        double[] w = new double[arms];
        Arrays.fill(w, 1.0 / arms);
        return new SampleRatioCheck(w, DEFAULT_THRESHOLD);
    }

    /** The same check flagging a mismatch when the p-value is below {@code threshold} in (0, 1). */
    public SampleRatioCheck withThreshold(double threshold) {
        return new SampleRatioCheck(weights, Check.openUnit("mismatch threshold", threshold));
    }

    public double threshold() {
        return threshold;
    }

    public int arms() {
        return weights.length;
    }

    /**
     * Tests observed units per arm, in the order of the weights.
     *
     * @throws StatsException if the number of counts differs from the number of weights, a count is
     *     negative, or all are 0
     */
    public Result test(long... observed) {
        if (observed.length != weights.length) {
            throw new StatsException("got %d arm counts for %d allocation weights", observed.length, weights.length);
        }
        double total = 0;
        for (int i = 0; i < observed.length; i++) {
            if (observed[i] < 0) {
                throw new StatsException("units of arm %d (%d) must be >= 0", i, observed[i]);
            }
            total += observed[i];
        }
        if (total == 0) {
            throw new StatsException("no units observed yet: a sample-ratio check needs at least 1");
        }
        double x2 = 0;
        for (int i = 0; i < observed.length; i++) {
            double expected = weights[i] * total;
            double dev = observed[i] - expected;
            x2 += dev * dev / expected;
        }
        double p = 1.0 - chiSquared.cumulativeProbability(x2);
        return new Result(x2, weights.length - 1, p, p < threshold, (long) total);
    }

    /**
     * Outcome of a sample-ratio check.
     *
     * @param chiSquare Pearson's statistic
     * @param degreesOfFreedom arms - 1
     * @param pValue upper tail probability of the statistic
     * @param mismatch whether {@code pValue < threshold}
     * @param totalUnits units over all arms
     */
    public record Result(double chiSquare, int degreesOfFreedom, double pValue, boolean mismatch, long totalUnits) {
    }
}
