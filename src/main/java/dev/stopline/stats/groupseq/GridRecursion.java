package dev.stopline.stats.groupseq;

import dev.stopline.stats.StatsException;

/**
 * The numerical-integration recursion for the sub-densities of a group-sequential Z statistic
 * (Armitage, McPherson &amp; Rowe 1969 [1]; Jennison &amp; Turnbull 2000, ch. 19 [2]). Mutable and
 * single-threaded: one instance walks forward one look at a time.
 *
 * <p>Canonical joint distribution: Z_k ~ N(theta sqrt(t_k), 1), increments of the score
 * S_k = Z_k sqrt(t_k) independent N(theta (t_k - t_{k-1}), t_k - t_{k-1}). The sub-density of Z_k on
 * paths that continued at looks 1..k-1 is
 * <pre>
 *   h_1(z) = phi(z - theta sqrt t_1)
 *   h_k(z) = integral over C_{k-1} of h_{k-1}(u) sqrt(t_k / D) phi((z sqrt t_k - u sqrt t_{k-1} - theta D) / sqrt D) du,
 *   D = t_k - t_{k-1},
 * </pre>
 * and the probability of first exit above b at look k is the integral of
 * {@code h_{k-1}(u) (1 - Phi((b sqrt t_k - u sqrt t_{k-1} - theta D) / sqrt D))} over C_{k-1}.
 *
 * <p>Grid (J&amp;T sec. 19.2): with mean mu_k = theta sqrt t_k, the 6r-1 points
 * <pre>
 *   x_i = mu_k - 3 - 4 ln(r / i)              i = 1 .. r-1       (log-spaced tails)
 *   x_i = mu_k - 3 + 3 (i - r) / (2r)         i = r .. 5r        (spacing 1.5/r over mu +- 3)
 *   x_i = mu_k + 3 + 4 ln(r / (6r - i))       i = 5r+1 .. 6r-1
 * </pre>
 * are trimmed to the continuation interval, its finite ends are added, interval midpoints are
 * inserted and Simpson's weights (d/6, 4d/6, d/6 per interval of length d) are used, so each
 * interval carries an odd number of points, at most 12r + 1. Adaptation: the continuation region
 * may be a union of two intervals (two-sided tests with an inner futility region); each interval
 * gets its own trimmed grid and the weights are concatenated. Close looks refine the grid (see
 * {@code gridR}).
 *
 * <p>Design note on speed (measured as thread CPU time, minimum of 100 runs, on a shared 2-core
 * machine under load): the density update is the cost, m_{k-1} m_k kernel terms with m up to 193.
 * Two exact-to-rounding shortcuts, checked against a naive transcription in GridRecursionTest:
 * (1) a kernel window skips terms below e^-60 (both grids are sorted, so the window slides);
 * (2) on the equally spaced centre of the previous grid, exp(c (d - n h)^2) = exp(c d^2) E^n G_n with
 * G_n tabulated once per look, so a row needs two exponentials instead of one per term. Together
 * with cheap root-finder starting guesses they took a one-sided K = 10 design with binding futility
 * from 3.8 to 1.5 ms and a two-sided K = 100 Pocock-type design from 5.3 to 2.8 ms. Buffers are
 * allocated once per recursion (grown only when close looks need a finer grid); the inner loops
 * allocate nothing.
 *
 * <p>References:
 * <ol>
 *   <li>Armitage P, McPherson CK, Rowe BC (1969). Repeated significance tests on accumulating data.
 *       J Royal Statistical Society A 132(2):235-244. doi:10.2307/2343787</li>
 *   <li>Jennison C, Turnbull BW (2000). Group Sequential Methods with Applications to Clinical
 *       Trials. Chapman &amp; Hall/CRC, ch. 19.</li>
 * </ol>
 */
final class GridRecursion {
    /** J&amp;T recommend r = 16 for errors near 1e-6 in the boundaries; we use it by default. */
    static final int DEFAULT_R = 16;
    private static final double INV_SQRT_2PI = 1 / Math.sqrt(2 * Math.PI);
    /**
     * Kernel terms below e^-60 (about 1e-26) of the kernel's peak are skipped. Each skipped term is at
     * most e^-60 times a weight, so the total absolute error in a sub-density is below 1e-26 times its
     * mass: far below the 1e-7 Simpson error of the grid.
     */
    static final double KERNEL_CUTOFF = 60;
    /** Largest grid parameter r for close looks (m &lt;= 12 r + 1 = 3841 points per interval). */
    static final int MAX_R = 320;
    /** Smallest information increment relative to the fraction: (1.5 / MAX_R)^2. */
    static final double MIN_RELATIVE_INCREMENT = (1.5 / MAX_R) * (1.5 / MAX_R);

    private final double theta;
    private final int baseR;
    /** Grid offsets of the look being closed, for its r (baseR unless looks are close together). */
    private double[] offsets;
    private int offsetsR;
    /** Spacing of the central, equally spaced part of the previous grid after midpoints: 0.75 / r. */
    private double uniformStep;
    /** Maximal runs [runStart, runEnd) of the previous grid with spacing uniformStep. */
    private final int[] runStart = new int[8];
    private final int[] runEnd = new int[8];
    private int runCount;
    /** G_n = exp(c h^2 n^2) for the current look, n &lt; gaussLength (where it stays above e^-700). */
    private double[] gauss;
    private int gaussLength;

    // Previous look: points, weight x sub-density, and the shifted score u_i sqrt(t_prev) + theta D.
    private double[] zPrev;
    private double[] whPrev;
    private int mPrev;
    private double tPrev;
    private boolean started;
    /** The previous look's grid and sub-density are mirror images about 0 (theta = 0, symmetric region). */
    private boolean mirroredPrev;

    // Current look.
    private double t;
    private double sqrtT;
    private double sqrtD;
    private double[] shift;
    private double[] zCur;
    private double[] whCur;
    /** Derivative of the last exit probability in its bound. */
    private double slope;

    GridRecursion(double theta, int r) {
        this.theta = theta;
        this.baseR = r;
        this.offsets = offsets(r);
        this.offsetsR = r;
        allocate(capacity(r));
    }

    private static int capacity(int r) {
        return 2 * (12 * r + 3) + 2;
    }

    /** Sizes all buffers for grids of parameter up to r, keeping the previous grid and its shifts. */
    private void allocate(int capacity) {
        zPrev = grow(zPrev, capacity);
        whPrev = grow(whPrev, capacity);
        shift = grow(shift, capacity);
        zCur = new double[capacity];
        whCur = new double[capacity];
        gauss = new double[capacity];
    }

    private static double[] grow(double[] a, int capacity) {
        return a == null ? new double[capacity] : java.util.Arrays.copyOf(a, capacity);
    }

    /**
     * Grid parameter for a look at t with information increments dBefore (from the previous look) and
     * dAfter (to the next): r_k = max(r, ceil(1.5 sqrt(t / min(dBefore, dAfter)))). Our adaptation of
     * J&amp;T: their fixed grid assumes the kernel sd sqrt(D / t) spans several grid steps; with close
     * looks (D / t below about 1/113 at r = 16) Simpson's rule on a kernel narrower than the grid gave
     * probabilities above 1 (measured at D = 1e-6). The rule keeps the central step 0.75 / r_k at or
     * below half the kernel sd; the kernel window keeps the cost near O(m) per row for such looks.
     */
    private int gridR(double dBefore, double dAfter) {
        double d = dAfter < dBefore ? dAfter : dBefore; // a NaN dAfter (next look unknown) is ignored
        if (!(d < Double.POSITIVE_INFINITY)) {
            return baseR;
        }
        double need = Math.ceil(1.5 * Math.sqrt(t / d));
        if (!(need <= MAX_R)) {
            throw new StatsException("information fractions too close together at t = %s: increments must be at "
                    + "least %s of the fraction (grid limit r <= %d), got %s", t, MIN_RELATIVE_INCREMENT, MAX_R, d);
        }
        return Math.max(baseR, (int) need);
    }

    private static double[] offsets(int r) {
        double[] x = new double[6 * r - 1];
        for (int i = 1; i <= 6 * r - 1; i++) {
            if (i < r) {
                x[i - 1] = -3 - 4 * Math.log(r / (double) i);
            } else if (i <= 5 * r) {
                x[i - 1] = -3 + 3.0 * (i - r) / (2.0 * r);
            } else {
                x[i - 1] = 3 + 4 * Math.log(r / (double) (6 * r - i));
            }
        }
        return x;
    }

    /** Moves to the next look at information fraction {@code tk} (greater than the last one). */
    void beginLook(double tk) {
        t = tk;
        sqrtT = Math.sqrt(tk);
        if (started) {
            double d = tk - tPrev;
            sqrtD = Math.sqrt(d);
            double sqrtTPrev = Math.sqrt(tPrev);
            double drift = theta * d;
            for (int i = 0; i < mPrev; i++) {
                shift[i] = zPrev[i] * sqrtTPrev + drift;
            }
        }
    }

    /** P(continue to this look and Z_k &gt; b). Also sets {@link #slope()} to its derivative in b. */
    double upperExit(double b) {
        if (b == Double.POSITIVE_INFINITY) {
            slope = 0;
            return 0;
        }
        if (!started) {
            double y = b - theta * sqrtT;
            double ay = Math.abs(y);
            double e = expHalfSquare(ay);
            slope = -e * INV_SQRT_2PI;
            return upperGivenExp(y, ay, e);
        }
        double bs = b * sqrtT;
        double inv = 1 / sqrtD;
        double sum = 0;
        double density = 0;
        for (int i = 0; i < mPrev; i++) {
            double y = (bs - shift[i]) * inv;
            double ay = Math.abs(y);
            double e = expHalfSquare(ay);
            sum += whPrev[i] * upperGivenExp(y, ay, e);
            density += whPrev[i] * e;
        }
        slope = -density * INV_SQRT_2PI * sqrtT * inv;
        return sum;
    }

    /** P(continue to this look and Z_k &lt; a). Also sets {@link #slope()} to its derivative in a. */
    double lowerExit(double a) {
        if (a == Double.NEGATIVE_INFINITY) {
            slope = 0;
            return 0;
        }
        if (!started) {
            double y = theta * sqrtT - a; // Phi(a - mu) = 1 - Phi(mu - a), bit for bit as NormalTail.lower
            double ay = Math.abs(y);
            double e = expHalfSquare(ay);
            slope = e * INV_SQRT_2PI;
            return upperGivenExp(y, ay, e);
        }
        double as = a * sqrtT;
        double inv = 1 / sqrtD;
        double sum = 0;
        double density = 0;
        for (int i = 0; i < mPrev; i++) {
            double y = -((as - shift[i]) * inv);
            double ay = Math.abs(y);
            double e = expHalfSquare(ay);
            sum += whPrev[i] * upperGivenExp(y, ay, e);
            density += whPrev[i] * e;
        }
        slope = density * INV_SQRT_2PI * sqrtT * inv;
        return sum;
    }

    /**
     * P(continue to this look and -a &lt; Z_k &lt; a), a &gt;= 0: the inner (two-sided) futility exit.
     * Also sets {@link #slope()} to its derivative in a.
     */
    double innerExit(double a) {
        if (!(a > 0)) {
            slope = 0;
            return 0;
        }
        if (!started) {
            double mu = theta * sqrtT;
            double y1 = a - mu;
            double y2 = a + mu; // Phi(-a - mu) = 1 - Phi(a + mu)
            double e1 = expHalfSquare(Math.abs(y1));
            double e2 = expHalfSquare(Math.abs(y2));
            slope = (e1 + e2) * INV_SQRT_2PI;
            return Math.max(0, 1 - upperGivenExp(y1, Math.abs(y1), e1) - upperGivenExp(y2, Math.abs(y2), e2));
        }
        double as = a * sqrtT;
        double inv = 1 / sqrtD;
        double sum = 0;
        double density = 0;
        for (int i = 0; i < mPrev; i++) {
            double y1 = (as - shift[i]) * inv;
            double y2 = -((-as - shift[i]) * inv);
            double a1 = Math.abs(y1);
            double a2 = Math.abs(y2);
            double e1 = expHalfSquare(a1);
            double e2 = expHalfSquare(a2);
            double p = 1 - upperGivenExp(y1, a1, e1) - upperGivenExp(y2, a2, e2);
            if (p > 0) {
                sum += whPrev[i] * p;
                density += whPrev[i] * (e1 + e2);
            }
        }
        slope = density * INV_SQRT_2PI * sqrtT * inv;
        return sum;
    }

    /**
     * Derivative of the exit probability last returned by {@link #upperExit}, {@link #lowerExit} or
     * {@link #innerExit} with respect to its bound: the same sum with the normal density in place of
     * the tail, from the exponential the tail already needs (Newton steps for the bound solves).
     */
    double slope() {
        return slope;
    }

    /** exp(-y^2 / 2) for y = |x| &lt;= 37, else 0 (where the tail is 0 as well). */
    private static double expHalfSquare(double ay) {
        return ay > 37 ? 0 : Math.exp(-0.5 * ay * ay);
    }

    /** 1 - Phi(y), bit for bit as {@link NormalTail#upper}, given |y| and exp(-y^2 / 2). */
    private static double upperGivenExp(double y, double ay, double e) {
        double tail = ay > 37 ? 0 : NormalTail.tailGivenExp(ay, e);
        return y >= 0 ? tail : 1 - tail;
    }

    /**
     * Closes the current look with continuation region (lo1, hi1), plus (lo2, hi2) when
     * {@code lo2 < hi2} (pass NaN to omit it): builds its grid and the sub-density on it.
     * {@code nextT} is the next look's information fraction (NaN if unknown); it sizes the grid.
     */
    void endLook(double lo1, double hi1, double lo2, double hi2, double nextT) {
        int r = gridR(started ? t - tPrev : Double.POSITIVE_INFINITY, nextT - t);
        if (r != offsetsR) {
            if (capacity(r) > zCur.length) {
                allocate(capacity(r));
            }
            offsets = offsets(r);
            offsetsR = r;
        }
        int m = addInterval(0, lo1, hi1);
        if (lo2 < hi2) {
            m = addInterval(m, lo2, hi2);
        }
        boolean mirror = theta == 0 && (!started || mirroredPrev) && mirrorable(lo1, hi1, lo2, hi2, m);
        fillDensity(mirror ? (m + 1) / 2 : m);
        if (mirror) {
            for (int j = 0; j < m / 2; j++) {
                whCur[m - 1 - j] = whCur[j];
            }
        }
        mirroredPrev = mirror;
        double[] z = zPrev;
        zPrev = zCur;
        zCur = z;
        double[] w = whPrev;
        whPrev = whCur;
        whCur = w;
        mPrev = m;
        tPrev = t;
        started = true;
        uniformStep = 0.75 / r;
        findUniformRuns();
    }

    /**
     * Under theta = 0 a region symmetric about 0 after a symmetric previous look gives a sub-density
     * symmetric about 0: h_k(-z) = h_k(z). The grid is symmetric too up to rounding (the offsets are),
     * so when every pair z_j, z_{m-1-j} cancels to 1e-12 the pairs are made exact mirrors and only the
     * first half of the rows is computed; the weights of the second half are copies. This halves the
     * density work of every two-sided efficacy recursion under H0 (measured: about 0.14 ms of a K=10
     * two-sided binding futility pass); it changes sub-densities at the level of rounding.
     */
    private boolean mirrorable(double lo1, double hi1, double lo2, double hi2, int m) {
        boolean symmetric = lo2 < hi2 ? lo1 == -hi2 && hi1 == -lo2 : lo1 == -hi1;
        if (!symmetric) {
            return false;
        }
        for (int j = 0; j < (m + 1) / 2; j++) {
            if (!(Math.abs(zCur[j] + zCur[m - 1 - j]) <= 1e-12) || !(whCur[j] == whCur[m - 1 - j]
                    || Math.abs(whCur[j] - whCur[m - 1 - j]) <= 1e-12 * Math.abs(whCur[j]))) {
                return false;
            }
        }
        for (int j = 0; j < m / 2; j++) {
            zCur[m - 1 - j] = -zCur[j];
            whCur[m - 1 - j] = whCur[j];
        }
        if (m % 2 == 1) {
            zCur[m / 2] = 0;
        }
        return true;
    }

    private void tabulateGauss(double ch2) {
        int n = 0;
        while (n < gauss.length && ch2 * n * n >= -700) {
            gauss[n] = Math.exp(ch2 * n * n);
            n++;
        }
        gaussLength = n;
    }

    /** Records the runs of at least 8 points of zPrev spaced exactly uniformStep apart (to 1e-9). */
    private void findUniformRuns() {
        runCount = 0;
        int i = 0;
        while (i + 1 < mPrev && runCount < runStart.length) {
            int j = i;
            while (j + 1 < mPrev && Math.abs(zPrev[j + 1] - zPrev[j] - uniformStep) <= 1e-9 * uniformStep) {
                j++;
            }
            if (j - i + 1 >= 8) {
                runStart[runCount] = i;
                runEnd[runCount] = j + 1;
                runCount++;
                i = j + 1;
            } else {
                i = Math.max(j, i + 1);
            }
        }
    }

    /**
     * Closes the current look with the continuation region of a design: one-sided
     * {@code (futility, efficacy)} (futility NaN means none); two-sided {@code (-efficacy, efficacy)}
     * minus the inner futility region {@code [-futility, futility]} when futility &gt; 0.
     */
    void endLook(int sides, double efficacy, double futility, double nextT) {
        if (sides == 1) {
            endLook(futility == futility ? futility : Double.NEGATIVE_INFINITY, efficacy, Double.NaN, Double.NaN, nextT);
        } else if (futility > 0) {
            endLook(-efficacy, -futility, futility, efficacy, nextT);
        } else {
            endLook(-efficacy, efficacy, Double.NaN, Double.NaN, nextT);
        }
    }

    /** P(continue past the last closed look): the integral of its sub-density. */
    double continuationMass() {
        double s = 0;
        for (int i = 0; i < mPrev; i++) {
            s += whPrev[i];
        }
        return s;
    }

    /** Appends the Simpson grid of (lo, hi) to zCur/whCur (weights only) from index m; returns new size. */
    private int addInterval(int m, double lo, double hi) {
        double mu = theta * sqrtT;
        double first = mu + offsets[0];
        double last = mu + offsets[offsets.length - 1];
        double a = Math.max(lo, first);
        double b = Math.min(hi, last);
        if (!(a < b)) {
            return m; // empty, or entirely beyond mu +- (3 + 4 ln r): mass below 1e-40
        }
        int start = m;
        zCur[m++] = a;
        for (double off : offsets) {
            double x = mu + off;
            if (x > a && x < b) {
                m = appendWithMidpoint(m, x);
            }
        }
        m = appendWithMidpoint(m, b);
        for (int i = start; i < m; i++) {
            whCur[i] = 0;
        }
        for (int i = start; i + 2 < m; i += 2) {
            double d = zCur[i + 2] - zCur[i];
            whCur[i] += d / 6;
            whCur[i + 1] = 4 * d / 6;
            whCur[i + 2] += d / 6;
        }
        return m;
    }

    private int appendWithMidpoint(int m, double x) {
        zCur[m] = 0.5 * (zCur[m - 1] + x);
        zCur[m + 1] = x;
        return m + 2;
    }

    /** Multiplies the Simpson weights in whCur by the sub-density at each point. O(mPrev m). */
    private void fillDensity(int m) {
        if (!started) {
            double mu = theta * sqrtT;
            for (int j = 0; j < m; j++) {
                whCur[j] *= NormalTail.pdf(zCur[j] - mu);
            }
            return;
        }
        double c = -0.5 / (sqrtD * sqrtD);
        double scale = sqrtT / sqrtD / Math.sqrt(2 * Math.PI);
        // Kernel window: terms with exp(c d^2) < e^-KERNEL_CUTOFF are skipped. Both grids are sorted,
        // so the window [lo, hi) only moves right. The class comment gives the measured effect.
        double reach = sqrtD * Math.sqrt(2 * KERNEL_CUTOFF);
        double h = uniformStep * Math.sqrt(tPrev);
        // The run recurrence pays off while the kernel spans several grid steps; when the kernel is
        // narrower than e^-50 across one step (looks extremely close), the window is tiny anyway.
        boolean useRuns = -c * h * h <= 50;
        if (useRuns) {
            tabulateGauss(c * h * h);
        }
        int lo = 0;
        int hi = 0;
        for (int j = 0; j < m; j++) {
            double v = zCur[j] * sqrtT;
            while (lo < mPrev && shift[lo] < v - reach) {
                lo++;
            }
            if (hi < lo) {
                hi = lo;
            }
            while (hi < mPrev && shift[hi] <= v + reach) {
                hi++;
            }
            double sum = 0;
            int i = lo;
            for (int r = 0; useRuns && r < runCount; r++) {
                int rs = Math.max(runStart[r], lo);
                int re = Math.min(runEnd[r], hi);
                if (rs >= re) {
                    continue;
                }
                for (; i < rs; i++) {
                    double d = v - shift[i];
                    sum += whPrev[i] * Math.exp(c * d * d);
                }
                sum += uniformRun(v, rs, re, c, h);
                i = re;
            }
            for (; i < hi; i++) {
                double d = v - shift[i];
                sum += whPrev[i] * Math.exp(c * d * d);
            }
            whCur[j] *= scale * sum;
        }
    }

    /**
     * sum_{i in [rs, re)} whPrev[i] exp(c (v - shift[i])^2) on a run where shift[i] = shift[rs] + (i - rs) h.
     * With p the run point nearest to v and d_p = v - shift[p],
     * exp(c (d_p -+ n h)^2) = exp(c d_p^2) E^{+-n} G_n with E = exp(-2 c d_p h) and G_n = exp(c h^2 n^2)
     * tabulated once per look: two exponentials per row instead of one per term. Two interleaved
     * power chains keep the multiply latency off the critical path. n stops where G_n underflows,
     * which also keeps E^n finite (|c| h^2 n^2 &lt;= 700 implies |c| h^2 n &lt;= 700).
     */
    private double uniformRun(double v, int rs, int re, double c, double h) {
        int p = rs + (int) Math.round((v - shift[rs]) / h);
        p = Math.max(rs, Math.min(re - 1, p));
        double dp = v - shift[p];
        double right = chain(p, Math.min(re - 1 - p, gaussLength - 1), 1, Math.exp(-2 * c * dp * h));
        double left = chain(p, Math.min(p - rs, gaussLength - 1), -1, Math.exp(2 * c * dp * h));
        return Math.exp(c * dp * dp) * (whPrev[p] + right + left);
    }

    /** sum_{n=1..count} whPrev[p + dir n] e^n G_n, two chains interleaved. */
    private double chain(int p, int count, int dir, double e) {
        double e2 = e * e;
        double x1 = e;
        double x2 = e2;
        double s1 = 0;
        double s2 = 0;
        int n = 1;
        for (; n + 1 <= count; n += 2) {
            s1 += whPrev[p + dir * n] * x1 * gauss[n];
            s2 += whPrev[p + dir * (n + 1)] * x2 * gauss[n + 1];
            x1 *= e2;
            x2 *= e2;
        }
        if (n <= count) {
            s1 += whPrev[p + dir * n] * x1 * gauss[n];
        }
        return s1 + s2;
    }
}
