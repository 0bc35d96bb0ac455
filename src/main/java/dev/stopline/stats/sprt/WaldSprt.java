package dev.stopline.stats.sprt;

import dev.stopline.stats.Check;
import dev.stopline.stats.StatsException;
import org.apache.commons.math3.analysis.UnivariateFunction;
import org.apache.commons.math3.analysis.solvers.BrentSolver;
import org.apache.commons.math3.exception.MathIllegalStateException;

/**
 * Wald's (1947) sequential probability ratio test of a simple null against a simple alternative.
 *
 * <p>With {@code Z_n} the log-likelihood ratio of the data after {@code n} observations, and Wald's
 * thresholds on the log scale
 *
 * <pre>
 *   ln A = ln((1 - beta) / alpha),     ln B = ln(beta / (1 - alpha)),
 * </pre>
 *
 * <p>the test accepts H1 when {@code Z_n >= ln A}, accepts H0 when {@code Z_n <= ln B}, and continues
 * otherwise. Wald's thresholds neglect the overshoot of {@code Z_n} beyond them, so the attained error
 * rates {@code alpha'}, {@code beta'} are bounded by {@code alpha' <= alpha / (1 - beta)},
 * {@code beta' <= beta / (1 - alpha)} and {@code alpha' + beta' <= alpha + beta} (Wald 1947, Sec. 3.2),
 * and are usually below nominal.
 *
 * <p>Two likelihood ratios are provided: {@link #bernoulli(double, double)} (a guardrail rate against a
 * fixed limit) and {@link #normalDifference(double)} (difference of two arms, normal approximation).
 */
public final class WaldSprt {
    private final double alpha;
    private final double beta;
    private final double logA;
    private final double logB;

    private WaldSprt(double alpha, double beta) {
        this.alpha = alpha;
        this.beta = beta;
        this.logA = Math.log((1 - beta) / alpha);
        this.logB = Math.log(beta / (1 - alpha));
    }

    /**
     * Wald's test with nominal type-I error {@code alpha} and type-II error {@code beta}.
     *
     * @throws StatsException unless both are in (0, 1) and {@code alpha + beta < 1}
     */
    public static WaldSprt of(double alpha, double beta) {
        Check.openUnit("alpha", alpha);
        Check.openUnit("beta", beta);
        if (!(alpha + beta < 1)) {
            throw new StatsException("alpha + beta = %s must be < 1 (else ln B >= ln A)", alpha + beta);
        }
        return new WaldSprt(alpha, beta);
    }

    public double alpha() {
        return alpha;
    }

    public double beta() {
        return beta;
    }

    /** Upper threshold {@code ln A = ln((1 - beta) / alpha)}. */
    public double logUpper() {
        return logA;
    }

    /** Lower threshold {@code ln B = ln(beta / (1 - alpha))}. */
    public double logLower() {
        return logB;
    }

    /** The decision for a log-likelihood ratio (H1 over H0). NaN is rejected. */
    public SprtDecision decide(double logLikelihoodRatio) {
        if (logLikelihoodRatio >= logA) {
            return SprtDecision.ACCEPT_H1;
        }
        if (logLikelihoodRatio <= logB) {
            return SprtDecision.ACCEPT_H0;
        }
        if (Double.isNaN(logLikelihoodRatio)) {
            throw new StatsException("log-likelihood ratio is NaN");
        }
        return SprtDecision.CONTINUE;
    }

    /**
     * The SPRT of a Bernoulli rate {@code p0} against {@code p1}, for instance a guardrail error rate
     * against a fixed limit.
     *
     * @throws StatsException unless both are in (0, 1) and differ
     */
    public Bernoulli bernoulli(double p0, double p1) {
        Check.openUnit("p0", p0);
        Check.openUnit("p1", p1);
        if (p0 == p1) {
            throw new StatsException("p0 and p1 must differ, both are %s", p0);
        }
        return new Bernoulli(this, p0, p1);
    }

    /**
     * The SPRT of a difference of two arms on the normal approximation: H0 {@code delta = 0} against H1
     * {@code delta = delta1}.
     *
     * @throws StatsException unless {@code delta1} is finite and not 0
     */
    public NormalDifference normalDifference(double delta1) {
        Check.finite("delta1", delta1);
        if (delta1 == 0) {
            throw new StatsException("delta1 must not be 0 (it is the alternative)");
        }
        return new NormalDifference(this, delta1);
    }

    /**
     * Wald's SPRT for a difference {@code d} of two arms with (plug-in) variance {@code v}, on the normal
     * approximation {@code d ~ N(delta, v)}:
     *
     * <pre>
     *   Z = ln( phi((d - delta1)/sqrt v) / phi(d/sqrt v) ) = (delta1 d - delta1^2 / 2) / v.
     * </pre>
     */
    public static final class NormalDifference {
        private final WaldSprt test;
        private final double delta1;

        private NormalDifference(WaldSprt test, double delta1) {
            this.test = test;
            this.delta1 = delta1;
        }

        public double delta1() {
            return delta1;
        }

        /** {@code (delta1 d - delta1^2/2) / v}; {@code v} finite and > 0. */
        public double logLikelihoodRatio(double difference, double variance) {
            Check.finite("difference", difference);
            Check.positive("variance", variance);
            return (delta1 * difference - 0.5 * delta1 * delta1) / variance;
        }

        public SprtDecision decide(double difference, double variance) {
            return test.decide(logLikelihoodRatio(difference, variance));
        }
    }

    /**
     * Wald's SPRT for a Bernoulli rate, with Wald's (1947, Ch. 5) operating characteristic and average
     * sample number approximations.
     *
     * <p>Per trial {@code z = x ln(p1/p0) + (1 - x) ln((1 - p1)/(1 - p0))}, so after {@code s} successes in
     * {@code n} trials {@code Z = s ln(p1/p0) + (n - s) ln((1 - p1)/(1 - p0))}.
     *
     * <p>OC. For the true rate {@code p}, {@code h = h(p) != 0} solves
     * {@code p (p1/p0)^h + (1 - p) ((1 - p1)/(1 - p0))^h = 1}, and
     * {@code OC(p) = P(accept H0) ~ (A^h - 1) / (A^h - B^h)}. At {@code p0} the root is {@code h = 1} and
     * {@code OC = 1 - alpha}; at {@code p1} it is {@code h = -1} and {@code OC = beta}. Where
     * {@code E_p[z] = 0} ({@code h = 0}) the limit is {@code OC = ln A / (ln A - ln B)}.
     *
     * <p>ASN. From Wald's identity {@code E[Z_N] = E[N] E_p[z]}, neglecting overshoot:
     * {@code ASN(p) ~ (OC ln B + (1 - OC) ln A) / E_p[z]}, with the limit
     * {@code -ln A ln B / E_p[z^2]} where {@code E_p[z] = 0}.
     *
     * <p>Root finding. We solve {@code g(h) = (p (a^h - 1) + (1 - p)(b^h - 1)) / h = 0} (with
     * {@code g(0) = E_p[z]}) instead of the equation itself: {@code g} is the secant slope of a convex
     * function through the origin, so it is non-decreasing and the trivial root {@code h = 0} is
     * removed. The bracket is grown by doubling (at most {@value #MAX_BRACKET_DOUBLINGS} times) and Brent's
     * method runs with at most {@value #MAX_EVALUATIONS} evaluations.
     */
    public static final class Bernoulli {
        /** Evaluation budget of Brent's method for {@code h(p)}. */
        public static final int MAX_EVALUATIONS = 200;
        /** Bracket growth budget for {@code h(p)}. */
        public static final int MAX_BRACKET_DOUBLINGS = 60;

        private final WaldSprt test;
        private final double p0;
        private final double p1;
        private final double lnSuccess;
        private final double lnFailure;

        private Bernoulli(WaldSprt test, double p0, double p1) {
            this.test = test;
            this.p0 = p0;
            this.p1 = p1;
            this.lnSuccess = Math.log(p1 / p0);
            this.lnFailure = Math.log1p(-p1) - Math.log1p(-p0);
        }

        public WaldSprt test() {
            return test;
        }

        public double p0() {
            return p0;
        }

        public double p1() {
            return p1;
        }

        /** Increment of Z for a success, {@code ln(p1/p0)}. */
        public double successStep() {
            return lnSuccess;
        }

        /** Increment of Z for a failure, {@code ln((1 - p1)/(1 - p0))}. */
        public double failureStep() {
            return lnFailure;
        }

        /** {@code s ln(p1/p0) + (n - s) ln((1 - p1)/(1 - p0))}, for {@code 0 <= s <= n}. */
        public double logLikelihoodRatio(long successes, long trials) {
            if (successes < 0 || successes > trials) {
                throw new StatsException("successes %d not in [0, trials = %d]", successes, trials);
            }
            return successes * lnSuccess + (trials - successes) * lnFailure;
        }

        public SprtDecision decide(long successes, long trials) {
            return test.decide(logLikelihoodRatio(successes, trials));
        }

        /** {@code E_p[z] = p ln(p1/p0) + (1 - p) ln((1 - p1)/(1 - p0))}. */
        public double expectedStep(double p) {
            Check.openUnit("p", p);
            return p * lnSuccess + (1 - p) * lnFailure;
        }

        /** The non-zero root {@code h(p)} of Wald's equation (0 where {@code E_p[z] = 0}). */
        public double h(double p) {
            return h(p, null);
        }

        /** As {@link #h(double)}, counting evaluations of {@code g} in {@code counter[0]} if not null. */
        double h(double p, int[] counter) {
            double mean = expectedStep(p);
            if (mean == 0) {
                return 0;
            }
            UnivariateFunction g = x -> {
                if (counter != null) {
                    counter[0]++;
                }
                return slope(p, x);
            };
            // g(0) = mean and g is non-decreasing: the root lies on the side opposite to the sign of mean
            double near = 0;
            double far = mean < 0 ? 1 : -1;
            int doublings = 0;
            while (g.value(far) * mean > 0) {
                if (++doublings > MAX_BRACKET_DOUBLINGS) {
                    throw new StatsException("no root of Wald's equation for p = %s within |h| <= 2^%d",
                            p, MAX_BRACKET_DOUBLINGS);
                }
                near = far;
                far *= 2;
            }
            try {
                return new BrentSolver(1e-14, 1e-15).solve(MAX_EVALUATIONS, g,
                        Math.min(near, far), Math.max(near, far));
            } catch (MathIllegalStateException e) {
                throw new StatsException("Wald's equation for p = %s not solved within %d evaluations",
                        p, MAX_EVALUATIONS);
            }
        }

        private double slope(double p, double x) {
            if (x == 0) {
                return p * lnSuccess + (1 - p) * lnFailure;
            }
            return (p * Math.expm1(x * lnSuccess) + (1 - p) * Math.expm1(x * lnFailure)) / x;
        }

        /** Wald's approximation of {@code P_p(accept H0)}. */
        public double operatingCharacteristic(double p) {
            return oc(h(p), test.logA, test.logB);
        }

        /**
         * {@code (A^h - 1)/(A^h - B^h)} for thresholds given on the log scale, in a form that neither
         * overflows nor cancels: divided through by {@code A^h} when {@code h > 0}.
         */
        static double oc(double h, double logUpper, double logLower) {
            if (h == 0) {
                return logUpper / (logUpper - logLower);
            }
            if (h > 0) {
                return Math.expm1(-h * logUpper) / Math.expm1(h * (logLower - logUpper));
            }
            double ua = Math.expm1(h * logUpper);
            return -ua / (Math.expm1(h * logLower) - ua);
        }

        /** Wald's approximation of {@code E_p[N]}, overshoot neglected. */
        public double averageSampleNumber(double p) {
            double mean = expectedStep(p);
            double h = h(p);
            if (h == 0) {
                double second = p * lnSuccess * lnSuccess + (1 - p) * lnFailure * lnFailure;
                return -test.logA * test.logB / second;
            }
            double oc = oc(h, test.logA, test.logB);
            return (oc * test.logB + (1 - oc) * test.logA) / mean;
        }
    }
}
