package dev.stopline.simulate;

import java.util.SplittableRandom;

/**
 * Fast Monte Carlo of a group-sequential primary on the Z scale. Each trial draws the independent
 * normal increments of the score process at the planned looks,
 * {@code S_k = S_{k-1} + theta (t_k - t_{k-1}) + sqrt(t_k - t_{k-1}) N(0, 1)}, {@code Z_k = S_k / sqrt t_k}
 * (Jennison &amp; Turnbull 2000, sec. 3.1 and 11.2), and applies the evaluator's stopping rule at the
 * planned bounds (efficacy first, then futility; the final look decides).
 *
 * <p>Design note: the inner loop allocates nothing and touches only a few primitive arrays built per
 * chunk: per trial, K normal draws (Java 17's {@code SplittableRandom.nextGaussian}, a modified
 * ziggurat) and K comparisons. Measured on the 2-core development machine (DEVELOPERS.md, "Benchmarks"):
 * 100,000 trials of a 5-look plan in well under a second.
 */
public final class ZScaleEngine {
    /** Trials per chunk: each chunk has its own generator, so this fixes the streams; never change it casually. */
    static final int CHUNK = 8192;

    private ZScaleEngine() {
    }

    /** Characteristics at drift {@code theta} from {@code trials} seeded trials. */
    public static Characteristics run(ZScalePlan plan, double theta, long trials, long seed, Parallel parallel) {
        if (trials < 2) {
            throw new IllegalArgumentException("trials " + trials + " must be >= 2");
        }
        int chunks = (int) ((trials + CHUNK - 1) / CHUNK);
        SplittableRandom[] gens = Parallel.generators(seed, chunks);
        Kernel kernel = new Kernel(plan, theta);
        Tally[] parts = parallel.map(chunks, i -> {
            long n = Math.min(CHUNK, trials - (long) i * CHUNK);
            Tally t = kernel.run(gens[i], n);
            parallel.progress().finished(n);
            return t;
        }, Tally[]::new);
        Tally total = new Tally(plan.looks());
        for (Tally t : parts) {
            total.add(t);
        }
        return total.characteristics(plan.unitsAtLook(), trials);
    }

    /** Counts of stops per look and reason. */
    static final class Tally {
        final long[] efficacy;
        final long[] futility;
        final long[] end;

        Tally(int looks) {
            efficacy = new long[looks];
            futility = new long[looks];
            end = new long[looks];
        }

        void add(Tally o) {
            for (int k = 0; k < efficacy.length; k++) {
                efficacy[k] += o.efficacy[k];
                futility[k] += o.futility[k];
                end[k] += o.end[k];
            }
        }

        Characteristics characteristics(long[] units, long trials) {
            int k = efficacy.length;
            long eff = 0;
            long fut = 0;
            double[] stop = new double[k];
            double mean = 0;
            double meanSq = 0;
            for (int i = 0; i < k; i++) {
                eff += efficacy[i];
                fut += futility[i];
                long s = efficacy[i] + futility[i] + end[i];
                stop[i] = s / (double) trials;
                mean += stop[i] * units[i];
                meanSq += stop[i] * (double) units[i] * units[i];
            }
            double pe = eff / (double) trials;
            double pf = fut / (double) trials;
            double sd = Math.sqrt(Math.max(0, meanSq - mean * mean));
            return new Characteristics(Characteristics.MONTE_CARLO, trials, pe, Characteristics.binomialSe(pe, trials),
                    pf, Characteristics.binomialSe(pf, trials), stop, mean, sd / Math.sqrt(trials),
                    Characteristics.lookQuantiles(stop, units));
        }
    }

    /** The precomputed constants of one plan and drift; {@link #run} is the allocation-free inner loop. */
    static final class Kernel {
        private final int k;
        private final double[] step;
        private final double[] sd;
        private final double[] invSqrtT;
        private final double[] b;
        private final double[] a;
        private final boolean twoSided;

        Kernel(ZScalePlan plan, double theta) {
            double[] t = plan.timing();
            k = t.length;
            step = new double[k];
            sd = new double[k];
            invSqrtT = new double[k];
            double previous = 0;
            for (int i = 0; i < k; i++) {
                double d = t[i] - previous;
                step[i] = theta * d;
                sd[i] = Math.sqrt(d);
                invSqrtT[i] = 1 / Math.sqrt(t[i]);
                previous = t[i];
            }
            b = plan.efficacy();
            a = plan.futility();
            twoSided = plan.sides() == 2;
        }

        Tally run(SplittableRandom rng, long trials) {
            Tally tally = new Tally(k);
            for (long n = 0; n < trials; n++) {
                double s = 0;
                for (int i = 0; i < k; i++) {
                    s += step[i] + sd[i] * rng.nextGaussian();
                    double z = s * invSqrtT[i];
                    double x = twoSided ? Math.abs(z) : z;
                    if (x >= b[i]) {
                        tally.efficacy[i]++;
                        break;
                    }
                    if (x <= a[i]) { // false for NaN: no futility bound
                        tally.futility[i]++;
                        break;
                    }
                    if (i == k - 1) {
                        tally.end[i]++;
                    }
                }
            }
            return tally;
        }

        /** One sample path of Z at the looks (up to and including the stopping look), for charts. */
        double[] path(SplittableRandom rng) {
            double[] z = new double[k];
            double s = 0;
            for (int i = 0; i < k; i++) {
                s += step[i] + sd[i] * rng.nextGaussian();
                z[i] = s * invSqrtT[i];
                double x = twoSided ? Math.abs(z[i]) : z[i];
                if (x >= b[i] || x <= a[i]) {
                    return java.util.Arrays.copyOf(z, i + 1);
                }
            }
            return z;
        }
    }

    /** {@code count} seeded sample paths of Z at the looks, each ending at its stopping look. */
    public static double[][] samplePaths(ZScalePlan plan, double theta, int count, long seed) {
        Kernel kernel = new Kernel(plan, theta);
        SplittableRandom rng = new SplittableRandom(seed);
        double[][] paths = new double[count][];
        for (int i = 0; i < count; i++) {
            paths[i] = kernel.path(rng);
        }
        return paths;
    }
}
