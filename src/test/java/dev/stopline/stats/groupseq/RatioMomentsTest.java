package dev.stopline.stats.groupseq;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.stats.StatsException;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

class RatioMomentsTest {

    @Test
    void moments_smallExample_matchHandCalculation() {
        // Y = orders {0,1,2,0,1}, X = sessions {1,2,4,1,3}: means 0.8 and 2.2, R = 4/11
        RatioMoments m = RatioMoments.of(new double[] {0, 1, 2, 0, 1}, new double[] {1, 2, 4, 1, 3});
        assertEquals(4.0 / 11.0, m.ratio(), 1e-15);
        assertEquals(0.7, m.numeratorVariance(), 1e-12);   // (6 - 16/5) / 4, hand calculation
        assertEquals(1.7, m.denominatorVariance(), 1e-12); // (31 - 121/5) / 4
        assertEquals(1.05, m.covariance(), 1e-12);         // (13 - 4*11/5) / 4
        double r = 4.0 / 11.0;
        double expected = (0.7 - 2 * r * 1.05 + r * r * 1.7) / (2.2 * 2.2); // Deng, Knoblich & Lu (2018) sec. 3
        assertEquals(expected, m.unitVariance(), 1e-12);
        assertEquals(expected / 5, m.ratioVariance(), 1e-12);
    }

    @Test
    void deltaMethodVariance_agreesWithSeededBootstrapWithinThreeStandardErrors() {
        // invented pilot: 3000 bookshop visitors, sessions 1 + Poisson(1.5), orders Binomial(sessions, 0.08)
        // plus a visitor-level propensity so that orders and sessions are correlated beyond the binomial
        SplittableRandom rng = new SplittableRandom(20261201L);
        int n = 3000;
        double[] y = new double[n];
        double[] x = new double[n];
        for (int i = 0; i < n; i++) {
            int sessions = 1 + poisson(rng, 1.5);
            double p = rng.nextDouble() < 0.2 ? 0.25 : 0.05;
            int orders = 0;
            for (int s = 0; s < sessions; s++) {
                orders += rng.nextDouble() < p ? 1 : 0;
            }
            x[i] = sessions;
            y[i] = orders;
        }
        RatioMoments m = RatioMoments.of(y, x);

        int b = 4000;
        double sum = 0, sumSq = 0;
        for (int rep = 0; rep < b; rep++) {
            double sy = 0, sx = 0;
            for (int i = 0; i < n; i++) {
                int j = rng.nextInt(n);
                sy += y[j];
                sx += x[j];
            }
            double r = sy / sx;
            sum += r;
            sumSq += r * r;
        }
        double bootVar = (sumSq - sum * sum / b) / (b - 1);
        // SE of a variance estimate from b near-normal draws: var * sqrt(2 / (b - 1))
        double se = bootVar * Math.sqrt(2.0 / (b - 1));
        double err = m.ratioVariance() - bootVar;
        assertTrue(Math.abs(err) < 3 * se, String.format("delta %.4e boot %.4e err %.2f SE",
                m.ratioVariance(), bootVar, err / se));
        // and the binomial variance that ignores the clustering of sessions is clearly different
        double naive = m.ratio() * (1 - m.ratio()) / m.sumDenominator();
        assertTrue(Math.abs(naive - bootVar) > 3 * se, "naive variance should be rejected: " + naive);
    }

    @Test
    void tooFewUnits_areRejectedWithTheRule() {
        StatsException e = assertThrows(StatsException.class,
                () -> new RatioMoments(1, 1, 1, 1, 1, 1));
        assertEquals("ratio pilot needs n >= 2 units (got 1)", e.getMessage());
    }

    private static int poisson(SplittableRandom rng, double mean) {
        double limit = Math.exp(-mean);
        double prod = rng.nextDouble();
        int k = 0;
        while (prod > limit) {
            prod *= rng.nextDouble();
            k++;
        }
        return k;
    }
}
