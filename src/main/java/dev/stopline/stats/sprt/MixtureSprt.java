package dev.stopline.stats.sprt;

import dev.stopline.stats.Check;
import dev.stopline.stats.StatsException;

/**
 * The two-sided mixture sequential probability ratio test (Robbins 1970) of a difference of two arms,
 * H0 {@code delta = 0}, with always-valid p-values and confidence sequences as in Johari, Pekelis and
 * Walsh (always valid inference; see the package references).
 *
 * <h2>Likelihood ratio</h2>
 * On the normal approximation the observed difference of means is {@code d ~ N(delta, v)}, with
 * {@code v = s_t^2/n_t + s_c^2/n_c} plugged in from the sample variances. The likelihood ratio of a
 * single alternative {@code delta} against 0 is {@code exp((delta d - delta^2/2) / v)}. Mixing it over
 * {@code delta ~ N(0, tau^2)} gives the ratio of the marginal density of {@code d}, {@code N(0, v + tau^2)},
 * to its null density {@code N(0, v)}:
 *
 * <pre>
 *   Lambda(d, v) = phi(d; 0, v + tau^2) / phi(d; 0, v)
 *                = sqrt(v / (v + tau^2)) exp( d^2/(2v) - d^2/(2(v + tau^2)) )
 *                = sqrt(v / (v + tau^2)) exp( tau^2 d^2 / (2 v (v + tau^2)) ).
 * </pre>
 *
 * <p>When {@code d} is the running mean of independent normal increments with known variance, each
 * single-alternative ratio is a non-negative martingale under H0 with mean 1, hence so is their mixture
 * {@code Lambda_n}; Ville's (1939) maximal inequality gives {@code P0(sup_n Lambda_n >= 1/alpha) <= alpha}.
 * Rejecting at the first look with {@code Lambda_n >= 1/alpha} therefore has type-I error at most
 * {@code alpha} however often one looks. With plugged-in variances this holds approximately (Johari et
 * al.); the tests measure it.
 *
 * <h2>Always-valid p-value</h2>
 * {@code p_n = min(p_{n-1}, 1/Lambda_n)}, {@code p_0 = 1}: a running minimum, kept in {@link State}.
 * {@code P0(p_n <= alpha for some n) <= alpha} by the same inequality.
 *
 * <h2>Confidence sequence</h2>
 * Testing {@code delta = delta0} uses {@code Lambda(d - delta0, v)}. The set of {@code delta0} not rejected,
 * {@code Lambda(d - delta0, v) < 1/alpha}, is
 *
 * <pre>
 *   ln(v/(v+tau^2))/2 + tau^2 (d - delta0)^2 / (2 v (v+tau^2)) < ln(1/alpha)
 *   (d - delta0)^2 < v (v + tau^2) / tau^2 * ( ln((v + tau^2)/v) + 2 ln(1/alpha) )
 * </pre>
 *
 * <p>so {@code d -/+ w} with half-width {@code w = sqrt(v (v+tau^2)/tau^2 (ln((v+tau^2)/v) + 2 ln(1/alpha)))}
 * (the open interval; we report its closure). It covers the true difference at all looks at once with
 * probability at least {@code 1 - alpha}, so the running intersection kept in {@link State} does too.
 *
 * <h2>Never more liberal than one fixed look</h2>
 * With {@code r = tau^2/(v+tau^2)} and {@code z = d/sqrt v}, {@code Lambda = sqrt(1-r) exp(r z^2/2)}, which
 * over {@code r} is at most {@code exp((z^2-1)/2)/|z|} for {@code |z| > 1} and at most 1 otherwise. With the
 * Mills-ratio bound {@code 1 - Phi(z) <= phi(z)/z} this gives
 * {@code 2 (1 - Phi(|z|)) Lambda <= 2 exp(-1/2) / (sqrt(2 pi) z^2) < 0.49} for {@code |z| > 1}, so at every
 * look {@code 1/Lambda_n} is at least the fixed-horizon two-sided p-value of that look, and the
 * confidence interval of a look contains the fixed-horizon Wald interval at the same level. (The running
 * minimum {@code p_n} can fall below the current look's fixed p-value when an earlier look was stronger.)
 *
 * <h2>Choice of tau^2</h2>
 * {@code tau^2} sets the effect scale where the test is most powerful; Johari et al. suggest matching it
 * to the effects expected. The daemon takes it from the experiment plan.
 */
public final class MixtureSprt {
    private final double alpha;
    private final double tauSquared;
    private final double logThreshold;

    private MixtureSprt(double alpha, double tauSquared) {
        this.alpha = alpha;
        this.tauSquared = tauSquared;
        this.logThreshold = -Math.log(alpha);
    }

    /**
     * The mixture SPRT at level {@code alpha} with mixing variance {@code tauSquared}.
     *
     * @throws StatsException unless {@code alpha} is in (0, 1) and {@code tauSquared} finite and > 0
     */
    public static MixtureSprt of(double alpha, double tauSquared) {
        return new MixtureSprt(Check.openUnit("alpha", alpha), Check.positive("tau^2", tauSquared));
    }

    public double alpha() {
        return alpha;
    }

    public double tauSquared() {
        return tauSquared;
    }

    /** {@code ln Lambda = ln(v/(v+tau^2))/2 + tau^2 d^2 / (2 v (v + tau^2))}. */
    public double logLikelihoodRatio(double difference, double variance) {
        Check.finite("difference", difference);
        Check.positive("variance", variance);
        double total = variance + tauSquared;
        return -0.5 * Math.log1p(tauSquared / variance)
                + tauSquared * difference * difference / (2 * variance * total);
    }

    /** {@code Lambda}; may overflow to infinity where the log does not. */
    public double likelihoodRatio(double difference, double variance) {
        return Math.exp(logLikelihoodRatio(difference, variance));
    }

    /** {@code min(1, 1/Lambda)}: this look's contribution to the always-valid p-value. */
    public double lookPValue(double difference, double variance) {
        return Math.exp(-Math.max(0.0, logLikelihoodRatio(difference, variance)));
    }

    /** Whether {@code Lambda >= 1/alpha} at this look. */
    public boolean rejects(double difference, double variance) {
        return logLikelihoodRatio(difference, variance) >= logThreshold;
    }

    /** Half-width {@code sqrt(v (v+tau^2)/tau^2 (ln((v+tau^2)/v) + 2 ln(1/alpha)))} of the confidence sequence. */
    public double halfWidth(double variance) {
        Check.positive("variance", variance);
        return halfWidth(variance, tauSquared, logThreshold);
    }

    static double halfWidth(double v, double tau2, double logThreshold) {
        return Math.sqrt(v * (v + tau2) / tau2 * (Math.log1p(tau2 / v) + 2 * logThreshold));
    }

    /** This look's confidence interval {@code d -/+ halfWidth(v)} for the difference. */
    public Interval confidenceInterval(double difference, double variance) {
        Check.finite("difference", difference);
        double w = halfWidth(variance);
        return new Interval(difference - w, difference + w);
    }

    /** The state before the first look: p-value 1, interval the whole line. */
    public State start() {
        return new State(this, 0, 1.0, Interval.ALL, Double.NEGATIVE_INFINITY);
    }

    /**
     * A state remembered from earlier looks (the daemon stores looks, p-value and interval between
     * snapshots). The running minimum and the running intersection continue from these values.
     */
    public State resume(long looks, double pValue, Interval interval) {
        if (!(looks >= 0 && pValue >= 0 && pValue <= 1)) {
            throw new StatsException("resumed state needs looks >= 0 and p-value in [0, 1], got %d and %s",
                    looks, pValue);
        }
        return new State(this, looks, pValue, interval, Double.NEGATIVE_INFINITY);
    }

    /**
     * Running state of a monitored comparison: the always-valid p-value (running minimum of
     * {@code 1/Lambda}), the running intersection of the confidence intervals, and the number of looks.
     * Immutable; {@link #update(double, double)} returns the next state.
     */
    public static final class State {
        private final MixtureSprt test;
        private final long looks;
        private final double pValue;
        private final Interval interval;
        private final double lastLogLikelihoodRatio;

        private State(MixtureSprt test, long looks, double pValue, Interval interval, double lastLog) {
            this.test = test;
            this.looks = looks;
            this.pValue = pValue;
            this.interval = interval;
            this.lastLogLikelihoodRatio = lastLog;
        }

        /** The state after a look with observed difference {@code d} and its variance {@code v}. */
        public State update(double difference, double variance) {
            double log = test.logLikelihoodRatio(difference, variance);
            double p = Math.min(pValue, Math.exp(-Math.max(0.0, log)));
            Interval ci = interval.intersect(test.confidenceInterval(difference, variance));
            return new State(test, looks + 1, p, ci, log);
        }

        public long looks() {
            return looks;
        }

        /** Always-valid p-value {@code min_k min(1, 1/Lambda_k)}. */
        public double pValue() {
            return pValue;
        }

        /** Whether H0 is rejected at level alpha: {@code Lambda_k >= 1/alpha} at some look so far. */
        public boolean rejected() {
            return pValue <= test.alpha;
        }

        /** Running intersection of the confidence intervals (the whole line before the first look). */
        public Interval interval() {
            return interval;
        }

        /** {@code ln Lambda} of the last look (negative infinity before the first). */
        public double lastLogLikelihoodRatio() {
            return lastLogLikelihoodRatio;
        }
    }
}
