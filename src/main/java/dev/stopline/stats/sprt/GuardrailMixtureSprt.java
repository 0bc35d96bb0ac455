package dev.stopline.stats.sprt;

import dev.stopline.stats.Check;
import dev.stopline.stats.Normal;
import dev.stopline.stats.StatsException;
import org.apache.commons.math3.analysis.UnivariateFunction;
import org.apache.commons.math3.analysis.solvers.BrentSolver;
import org.apache.commons.math3.exception.MathIllegalStateException;

/**
 * One-sided mixture SPRT for a guardrail: does the treatment harm the metric by more than a tolerated
 * margin? With harm {@code h = s delta} ({@code s = +1} if an increase harms, {@code -1} if a decrease
 * harms) the test is
 *
 * <pre>
 *   H0: h <= margin   (harm within tolerance)      against      H1: h > margin.
 * </pre>
 *
 * <h2>Construction: a half-normal mixture</h2>
 * With the observed harm beyond the margin {@code x = s d - margin} and {@code d ~ N(delta, v)}, the
 * likelihood ratio of the shift {@code theta = h - margin} against 0 is {@code exp((theta x - theta^2/2)/v)}.
 * We mix it over {@code theta > 0} with the half-normal density {@code 2 phi(theta/tau)/tau}; completing
 * the square,
 *
 * <pre>
 *   Lambda+(x, v) = 2 sqrt(v/(v+tau^2)) exp(tau^2 x^2 / (2 v (v+tau^2))) Phi( x tau / sqrt(v (v+tau^2)) )
 *                 = 2 Lambda(x, v) Phi( x sqrt(r) / sqrt v ),     r = tau^2/(v+tau^2),
 * </pre>
 *
 * <p>with {@code Lambda} the two-sided mixture of {@link MixtureSprt}. Validity for the composite null:
 * at the boundary {@code h = margin} each single-alternative ratio is a mean-1 martingale, and when
 * {@code h < margin} it is a supermartingale for every {@code theta > 0} (its conditional expectation
 * is {@code exp(theta (h - margin) dI) <= 1} per information increment {@code dI}); so is the mixture,
 * and Ville's inequality bounds {@code P(sup_n Lambda+_n >= 1/alpha) <= alpha} for every null harm.
 *
 * <p>We chose this over "the two-sided mixture at {@code 2 alpha} with a sign condition": that rule
 * rejects when {@code Lambda >= 1/(2 alpha)} with {@code x > 0}; Ville bounds the probability of either
 * sign crossing by {@code 2 alpha}, but a path may cross on both sides at different looks, so the
 * one-sided probability is only bounded by {@code alpha + P(both)/2}, not by {@code alpha}. The
 * half-normal mixture needs no such argument and is never weaker: {@code Lambda+ >= Lambda} for
 * {@code x >= 0} since {@code Phi >= 1/2} there.
 *
 * <h2>Always-valid lower confidence bound on the harm</h2>
 * {@code Lambda+} increases in {@code x} (the mixture is over positive {@code theta} only), so the harms
 * {@code m} not rejected, {@code Lambda+(s d - m, v) < 1/alpha}, form the half-line {@code m > s d - x*}
 * where {@code Lambda+(x*, v) = 1/alpha}. The bound {@code L_n = s d_n - x*_n} holds for all looks at once
 * with probability at least {@code 1 - alpha}, so the running maximum is kept. H0 is rejected exactly
 * when {@code L_n >= margin}. Since {@code Lambda <= Lambda+ <= 2 Lambda} for {@code x >= 0}, {@code x*} lies
 * between the two-sided half-widths at levels {@code 2 alpha} and {@code alpha}; Brent's method finds it
 * in that bracket within {@value #MAX_EVALUATIONS} evaluations (so {@code alpha < 1/2} is required).
 */
public final class GuardrailMixtureSprt {
    /** Evaluation budget for the bound {@code x*}. */
    public static final int MAX_EVALUATIONS = 100;
    private static final double LN2 = Math.log(2);

    private final double alpha;
    private final double tauSquared;
    private final HarmDirection direction;
    private final double margin;
    private final double logThreshold;

    private GuardrailMixtureSprt(double alpha, double tauSquared, HarmDirection direction, double margin) {
        this.alpha = alpha;
        this.tauSquared = tauSquared;
        this.direction = direction;
        this.margin = margin;
        this.logThreshold = -Math.log(alpha);
    }

    /**
     * A guardrail test at level {@code alpha} in (0, 1/2), mixing variance {@code tauSquared} > 0,
     * harmful direction and tolerated harm {@code margin >= 0} (in the metric's difference units).
     */
    public static GuardrailMixtureSprt of(double alpha, double tauSquared, HarmDirection direction, double margin) {
        Check.openUnit("alpha", alpha);
        if (!(alpha < 0.5)) {
            throw new StatsException("one-sided alpha %s must be < 0.5", alpha);
        }
        Check.positive("tau^2", tauSquared);
        if (direction == null) {
            throw new StatsException("harm direction must be given");
        }
        Check.nonNegative("margin", margin);
        return new GuardrailMixtureSprt(alpha, tauSquared, direction, margin);
    }

    public double alpha() {
        return alpha;
    }

    public double margin() {
        return margin;
    }

    public HarmDirection direction() {
        return direction;
    }

    /** {@code ln Lambda+} at observed difference {@code d} (treatment minus control) and variance {@code v}. */
    public double logLikelihoodRatio(double difference, double variance) {
        Check.finite("difference", difference);
        Check.positive("variance", variance);
        return logMixture(direction.harm(difference) - margin, variance);
    }

    private double logMixture(double x, double v) {
        double u = x / Math.sqrt(v);
        double r = tauSquared / (v + tauSquared);
        return LN2 - 0.5 * Math.log1p(tauSquared / v) + 0.5 * r * u * u + Math.log(Normal.cdf(u * Math.sqrt(r)));
    }

    /** {@code min(1, 1/Lambda+)}: this look's contribution to the always-valid one-sided p-value. */
    public double lookPValue(double difference, double variance) {
        return Math.exp(-Math.max(0.0, logLikelihoodRatio(difference, variance)));
    }

    /** Whether {@code Lambda+ >= 1/alpha} at this look. */
    public boolean rejects(double difference, double variance) {
        return logLikelihoodRatio(difference, variance) >= logThreshold;
    }

    /** {@code x*(v)}: the excess harm at which {@code Lambda+ = 1/alpha}. */
    public double criticalExcess(double variance) {
        return criticalExcess(variance, null);
    }

    double criticalExcess(double variance, int[] counter) {
        Check.positive("variance", variance);
        double lo = MixtureSprt.halfWidth(variance, tauSquared, logThreshold - LN2);
        double hi = MixtureSprt.halfWidth(variance, tauSquared, logThreshold);
        UnivariateFunction f = x -> {
            if (counter != null) {
                counter[0]++;
            }
            return logMixture(x, variance) - logThreshold;
        };
        try {
            return new BrentSolver(1e-14, 1e-13 * hi).solve(MAX_EVALUATIONS, f, lo, hi);
        } catch (MathIllegalStateException e) {
            throw new StatsException("guardrail bound not found within %d evaluations (v = %s)",
                    MAX_EVALUATIONS, variance);
        }
    }

    /** This look's always-valid lower confidence bound on the harm {@code s delta}: {@code s d - x*(v)}. */
    public double harmLowerBound(double difference, double variance) {
        Check.finite("difference", difference);
        return direction.harm(difference) - criticalExcess(variance);
    }

    /** The state before the first look. */
    public State start() {
        return new State(this, 0, 1.0, Double.NEGATIVE_INFINITY);
    }

    /** A state remembered from earlier looks: the running minimum p-value and maximum lower bound continue. */
    public State resume(long looks, double pValue, double harmLowerBound) {
        if (!(looks >= 0 && pValue >= 0 && pValue <= 1)) {
            throw new StatsException("resumed state needs looks >= 0 and p-value in [0, 1], got %d and %s",
                    looks, pValue);
        }
        return new State(this, looks, pValue, harmLowerBound);
    }

    /**
     * Running state: always-valid one-sided p-value (running minimum of {@code 1/Lambda+}) and the running
     * maximum of the lower bounds on the harm. Immutable.
     */
    public static final class State {
        private final GuardrailMixtureSprt test;
        private final long looks;
        private final double pValue;
        private final double harmLowerBound;

        private State(GuardrailMixtureSprt test, long looks, double pValue, double harmLowerBound) {
            this.test = test;
            this.looks = looks;
            this.pValue = pValue;
            this.harmLowerBound = harmLowerBound;
        }

        /**
         * The state after a look. The root finding for this look's bound is skipped when it cannot raise
         * the running maximum: {@code x* >= w(2 alpha)}, the closed-form two-sided half-width at
         * {@code 2 alpha}, so {@code s d - w(2 alpha) <= max} settles it (exact, not an approximation).
         */
        public State update(double difference, double variance) {
            double p = Math.min(pValue, test.lookPValue(difference, variance));
            double harm = test.direction.harm(difference);
            double ceiling = harm - MixtureSprt.halfWidth(variance, test.tauSquared, test.logThreshold - LN2);
            double lower = ceiling <= harmLowerBound ? harmLowerBound
                    : Math.max(harmLowerBound, harm - test.criticalExcess(variance));
            return new State(test, looks + 1, p, lower);
        }

        public long looks() {
            return looks;
        }

        public double pValue() {
            return pValue;
        }

        /** Running maximum of the lower bounds on the harm (negative infinity before the first look). */
        public double harmLowerBound() {
            return harmLowerBound;
        }

        /** Whether harm beyond the margin has been shown at level alpha. */
        public boolean harmShown() {
            return pValue <= test.alpha;
        }
    }
}
