package dev.stopline.simulate;

import dev.stopline.stats.groupseq.StoppingProbabilities;

/**
 * Operating characteristics of a group-sequential primary by numerical integration: the per-look
 * stopping probabilities of {@link StoppingProbabilities} (Armitage, McPherson &amp; Rowe 1969;
 * Jennison &amp; Turnbull 2000, ch. 19) at the planned bounds and the drift of the effect. The
 * expected size is {@code sum_k P(stop at k) n_k}. Accuracy is that of the recursion, about 1e-7
 * absolute on each probability.
 */
public final class ExactEngine {
    private ExactEngine() {
    }

    /** Characteristics at drift {@code theta}. */
    public static Characteristics run(ZScalePlan plan, double theta) {
        StoppingProbabilities.Result r = StoppingProbabilities.compute(plan.timing(), plan.sides(), plan.efficacy(),
                plan.hasFutility() ? plan.futility() : null, theta);
        double[] stop = r.stopAtLook();
        long[] n = plan.unitsAtLook();
        double expected = 0;
        for (int k = 0; k < stop.length; k++) {
            expected += stop[k] * n[k];
        }
        return new Characteristics(Characteristics.EXACT, 0, r.efficacy(), 0, r.futilityTotal(), 0, stop, expected, 0,
                Characteristics.lookQuantiles(stop, n));
    }
}
