package dev.stopline.stats.groupseq;

import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.ArrayList;
import java.util.List;
import org.apache.commons.math3.distribution.NormalDistribution;
import org.junit.jupiter.api.Test;

/**
 * The fast recursion (kernel window, Gaussian power chains on the uniform run) against a plain
 * transcription of Jennison &amp; Turnbull (2000, ch. 19): same grid, Simpson weights, one
 * exponential per kernel term and Commons Math normal tails. Differences can only come from the
 * speed-ups, so they must be at rounding level.
 */
class GridRecursionTest {
    private static final NormalDistribution STD = new NormalDistribution(0, 1);

    /** Regions per look: {lo1, hi1, lo2, hi2} with NaN for a missing second interval. */
    private static double[] offsets(int r) {
        double[] off = new double[6 * r - 1];
        for (int i = 1; i <= 6 * r - 1; i++) {
            off[i - 1] = i < r ? -3 - 4 * Math.log((double) r / i)
                    : i <= 5 * r ? -3 + 3.0 * (i - r) / (2.0 * r) : 3 + 4 * Math.log((double) r / (6 * r - i));
        }
        return off;
    }

    /** Grid parameter of look k: max(r, ceil(1.5 sqrt(t_k / min(D_k, D_{k+1})))), as documented in GridRecursion. */
    private static int gridR(double[] t, int k, int r) {
        double d = Math.min(k == 0 ? t[0] : t[k] - t[k - 1], t[k + 1] - t[k]);
        return Math.max(r, (int) Math.ceil(1.5 * Math.sqrt(t[k] / d)));
    }

    private static double[][] naive(double[] t, double[][] region, double theta, int r) {
        double[] z = null;
        double[] wh = null;
        double[][] out = new double[2][t.length];
        for (int k = 0; k < t.length; k++) {
            double sq = Math.sqrt(t[k]);
            double mu = theta * sq;
            double hi = region[k][region[k][3] == region[k][3] ? 3 : 1];
            double lo = region[k][0];
            if (z == null) {
                out[0][k] = 1 - STD.cumulativeProbability(hi - mu);
                out[1][k] = STD.cumulativeProbability(lo - mu);
            } else {
                double d = t[k] - t[k - 1];
                for (int i = 0; i < z.length; i++) {
                    double s = z[i] * Math.sqrt(t[k - 1]) + theta * d;
                    out[0][k] += wh[i] * (1 - STD.cumulativeProbability((hi * sq - s) / Math.sqrt(d)));
                    out[1][k] += wh[i] * STD.cumulativeProbability((lo * sq - s) / Math.sqrt(d));
                }
            }
            if (k + 1 == t.length) {
                break;
            }
            double[] off = offsets(gridR(t, k, r));
            List<double[]> pts = new ArrayList<>();
            addInterval(pts, off, mu, region[k][0], region[k][1]);
            if (region[k][2] < region[k][3]) {
                addInterval(pts, off, mu, region[k][2], region[k][3]);
            }
            double[] nz = new double[pts.size()];
            double[] nwh = new double[pts.size()];
            for (int j = 0; j < nz.length; j++) {
                nz[j] = pts.get(j)[0];
                double dens;
                if (z == null) {
                    dens = STD.density(nz[j] - mu);
                } else {
                    double d = t[k] - t[k - 1];
                    dens = 0;
                    for (int i = 0; i < z.length; i++) {
                        double x = (nz[j] * sq - z[i] * Math.sqrt(t[k - 1]) - theta * d) / Math.sqrt(d);
                        dens += wh[i] * sq / Math.sqrt(d) * Math.exp(-0.5 * x * x) / Math.sqrt(2 * Math.PI);
                    }
                }
                nwh[j] = pts.get(j)[1] * dens;
            }
            z = nz;
            wh = nwh;
        }
        return out;
    }

    private static void addInterval(List<double[]> pts, double[] off, double mu, double lo, double hi) {
        double a = Math.max(lo, mu + off[0]);
        double b = Math.min(hi, mu + off[off.length - 1]);
        if (!(a < b)) {
            return;
        }
        List<Double> x = new ArrayList<>();
        x.add(a);
        for (double o : off) {
            if (mu + o > a && mu + o < b) {
                x.add(mu + o);
            }
        }
        x.add(b);
        int start = pts.size();
        for (int i = 0; i < x.size(); i++) {
            if (i > 0) {
                double d = x.get(i) - x.get(i - 1);
                pts.get(pts.size() - 1)[1] += d / 6;
                pts.add(new double[] {0.5 * (x.get(i) + x.get(i - 1)), 4 * d / 6});
                pts.add(new double[] {x.get(i), d / 6});
            } else {
                pts.add(new double[] {x.get(0), 0});
            }
        }
        assertTrue(pts.size() - start == 2 * x.size() - 1);
    }

    private static double[][] fast(double[] t, double[][] region, double theta) {
        GridRecursion g = new GridRecursion(theta, GridRecursion.DEFAULT_R);
        double[][] out = new double[2][t.length];
        for (int k = 0; k < t.length; k++) {
            g.beginLook(t[k]);
            out[0][k] = g.upperExit(region[k][region[k][3] == region[k][3] ? 3 : 1]);
            out[1][k] = g.lowerExit(region[k][0]);
            if (k + 1 < t.length) {
                g.endLook(region[k][0], region[k][1], region[k][2], region[k][3], t[k + 1]);
            }
        }
        return out;
    }

    private static void assertAgree(double[] t, double[][] region, double theta) {
        double[][] slow = naive(t, region, theta, GridRecursion.DEFAULT_R);
        double[][] quick = fast(t, region, theta);
        for (int s = 0; s < 2; s++) {
            for (int k = 0; k < t.length; k++) {
                double e = slow[s][k];
                double q = quick[s][k];
                double err = Math.abs(q - e);
                // Rounding level: relative 1e-10 (Hart tails vs Commons Math differ by up to ~1e-8 relative
                // only beyond z = 4, where the absolute size is below 3e-5, hence the absolute 1e-13).
                double tol = 1e-10 * Math.abs(e) + 1e-13;
                String what = (s == 0 ? "upper" : "lower") + " look " + (k + 1) + " theta " + theta;
                assertTrue(err <= tol, () -> what + ": naive " + e + " fast " + q + " error " + err);
            }
        }
    }

    private static final double NAN = Double.NaN;
    private static final double INF = Double.POSITIVE_INFINITY;

    @Test
    void fastRecursion_equalsNaiveTranscription_oneSidedWithFutility() {
        double[] t = {0.1, 0.3, 0.45, 0.7, 0.85, 1};
        double[][] region = {{-2.5, 4.1, NAN, NAN}, {-0.8, 3.0, NAN, NAN}, {0.1, 2.7, NAN, NAN},
                             {0.9, 2.3, NAN, NAN}, {1.5, 2.1, NAN, NAN}, {2.0, 2.0, NAN, NAN}};
        assertAgree(t, region, 0);
        assertAgree(t, region, 2.9);
    }

    @Test
    void fastRecursion_equalsNaiveTranscription_twoIntervalsAndInfiniteEnds() {
        double[] t = {0.2, 0.4, 0.6, 0.8, 1};
        double[][] region = {{-INF, -0.3, 0.3, INF}, {-3.2, -0.6, 0.6, 3.2}, {-2.6, -0.9, 0.9, 2.6},
                             {-2.3, -1.2, 1.2, 2.3}, {-2.0, NAN, NAN, 2.0}};
        assertAgree(t, region, 0);
        assertAgree(t, region, -1.7);
    }

    @Test
    void fastRecursion_equalsNaiveTranscription_looksVeryCloseTogether() {
        // Increments of 1e-5 need r = 336 > MAX_R; 1e-4 of 0.5 gives r_k = 107, and the uniform-run
        // shortcut still applies (the adapted grid step is below the kernel sd by construction).
        double[] t = {0.5, 0.5001, 0.5002, 0.9, 1};
        double[][] region = {{-INF, 2.5, NAN, NAN}, {-INF, 2.5, NAN, NAN}, {-INF, 2.5, NAN, NAN},
                             {-INF, 2.2, NAN, NAN}, {-INF, 2.0, NAN, NAN}};
        assertAgree(t, region, 0.8);
    }

    @Test
    void gridGrowingAfterTheFirstLook_keepsThePreviousShifts() {
        // Regression: buffers grown at look 2 (close look 3 follows) lost the shifts of look 1's grid,
        // which spent alpha wrongly (caught by the spent-alpha cross-check over random looks).
        double[] t = {0.2, 0.5, 0.5002, 1};
        double[][] region = {{-INF, 3.0, NAN, NAN}, {-INF, 2.6, NAN, NAN}, {-INF, 2.6, NAN, NAN}, {-INF, 2.0, NAN, NAN}};
        assertAgree(t, region, 0);
        assertAgree(t, region, 1.4);
    }
}
