package dev.stopline.simulate;

/**
 * Operating characteristics of a plan's primary analysis at one true effect.
 *
 * @param method                 {@code exact} (numerical integration) or {@code monte-carlo}
 * @param trials                 simulated trials (0 for exact)
 * @param efficacy               P(stop for efficacy): the type I error at effect 0, the power elsewhere
 * @param efficacySe             its Monte Carlo standard error, sqrt(p (1 - p) / n); 0 for exact
 * @param futility               P(stop for futility), the final look included when the evaluator calls it futility
 * @param futilitySe             its standard error
 * @param stopLook               P(the analysis ends at look k), k = 1..K (for SPRT plans: at snapshot k)
 * @param expectedUnitsPerArm    E[units in the largest arm when the analysis ends]
 * @param expectedUnitsPerArmSe  its standard error, sd / sqrt(n); 0 for exact
 * @param unitsQuantiles         units per arm at the 10%, 50% and 90% quantiles of the stopping size
 */
public record Characteristics(String method, long trials, double efficacy, double efficacySe, double futility,
                              double futilitySe, double[] stopLook, double expectedUnitsPerArm,
                              double expectedUnitsPerArmSe, long[] unitsQuantiles) {
    public static final String EXACT = "exact";
    public static final String MONTE_CARLO = "monte-carlo";
    /** The quantile levels of {@link #unitsQuantiles}. */
    public static final double[] QUANTILE_LEVELS = {0.1, 0.5, 0.9};

    public Characteristics {
        stopLook = stopLook.clone();
        unitsQuantiles = unitsQuantiles.clone();
    }

    @Override
    public double[] stopLook() {
        return stopLook.clone();
    }

    @Override
    public long[] unitsQuantiles() {
        return unitsQuantiles.clone();
    }

    /** P(the final look ends without efficacy or futility). */
    public double noDecision() {
        return Math.max(0, 1 - efficacy - futility);
    }

    /** Binomial standard error of a proportion from n trials. */
    static double binomialSe(double p, long n) {
        return n > 1 ? Math.sqrt(p * (1 - p) / n) : Double.NaN;
    }

    /** Quantiles of a discrete distribution over looks with the given units at each look (the smallest look whose cumulative probability reaches the level). */
    static long[] lookQuantiles(double[] stopLook, long[] unitsAtLook) {
        long[] q = new long[QUANTILE_LEVELS.length];
        for (int j = 0; j < q.length; j++) {
            double cum = 0;
            int k = 0;
            while (k < stopLook.length - 1 && (cum += stopLook[k]) < QUANTILE_LEVELS[j] - 1e-12) {
                k++;
            }
            q[j] = unitsAtLook[k];
        }
        return q;
    }
}
