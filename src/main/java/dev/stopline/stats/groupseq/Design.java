package dev.stopline.stats.groupseq;

import dev.stopline.stats.Check;
import dev.stopline.stats.StatsException;
import java.util.Arrays;
import java.util.Objects;

/**
 * An immutable group-sequential design: level, sides, planned looks, efficacy boundary family and
 * optional beta-spending futility. Withers return new objects; the last of {@link #withSpending}
 * and {@link #withClassical} wins.
 *
 * <p>Defaults of {@link #of(double, int)}: one look at t = 1, O'Brien-Fleming-type spending, no
 * futility, no power (so drift and inflation factor are NaN until {@link #withPower} or
 * {@link #withFutility} is given). With futility, the power is 1 - beta; an explicit power must
 * agree with it.
 */
public final class Design {
    /** Largest number of planned looks. */
    public static final int MAX_LOOKS = 200;

    private final double alpha;
    private final int sides;
    private final double[] looks;
    private final String spendingSpec;
    private final ClassicalShape classical;
    private final String futilitySpec;
    private final double beta;
    private final boolean binding;
    private final double power;

    private Design(double alpha, int sides, double[] looks, String spendingSpec, ClassicalShape classical,
                   String futilitySpec, double beta, boolean binding, double power) {
        this.alpha = alpha;
        this.sides = sides;
        this.looks = looks;
        this.spendingSpec = spendingSpec;
        this.classical = classical;
        this.futilitySpec = futilitySpec;
        this.beta = beta;
        this.binding = binding;
        this.power = power;
    }

    /** A design at total type I error {@code alpha} (both sides together when {@code sides = 2}). */
    public static Design of(double alpha, int sides) {
        Check.openUnit("alpha", alpha);
        Check.inRange("sides", sides, 1, 2);
        if (!(alpha / sides < 0.5)) {
            throw new StatsException("alpha per side %s must be < 0.5", alpha / sides);
        }
        return new Design(alpha, sides, new double[] {1}, "obrien-fleming", null, null, Double.NaN, false, Double.NaN);
    }

    /** Planned information fractions: finite, strictly increasing, &gt; 0, the last equal to 1; 1..200 looks. */
    public Design withLooks(double... informationFractions) {
        Objects.requireNonNull(informationFractions, "informationFractions");
        double[] t = informationFractions.clone();
        Check.inRange("number of looks", t.length, 1, MAX_LOOKS);
        double previous = 0;
        for (int i = 0; i < t.length; i++) {
            if (!(t[i] > previous && t[i] <= 1)) {
                throw new StatsException("information fractions must be strictly increasing in (0, 1]: t[%d] = %s after %s",
                        i, t[i], previous);
            }
            previous = t[i];
        }
        if (t[t.length - 1] != 1) {
            throw new StatsException("the last planned information fraction must be 1, got %s", t[t.length - 1]);
        }
        return new Design(alpha, sides, t, spendingSpec, classical, futilitySpec, beta, binding, power);
    }

    /** {@code k} equally spaced looks t_j = j / k, 1 &lt;= k &lt;= 200. */
    public Design withEqualLooks(int k) {
        Check.inRange("number of looks", k, 1, MAX_LOOKS);
        double[] t = new double[k];
        for (int j = 1; j <= k; j++) {
            t[j - 1] = j == k ? 1 : (double) j / k;
        }
        return withLooks(t);
    }

    /** Lan-DeMets efficacy spending with a {@link SpendingFunction#of} spec; replaces a classical shape. */
    public Design withSpending(String spec) {
        String canonical = SpendingFunction.of(spec, alpha / sides).spec();
        return new Design(alpha, sides, looks, canonical, null, futilitySpec, beta, binding, power);
    }

    /** Classical Pocock or O'Brien-Fleming boundaries; replaces spending. */
    public Design withClassical(ClassicalShape shape) {
        Objects.requireNonNull(shape, "shape");
        return new Design(alpha, sides, looks, null, shape, futilitySpec, beta, binding, power);
    }

    /** Futility by beta spending with the given family at total type II error {@code beta}. */
    public Design withFutility(String spendingSpec, double beta, boolean binding) {
        Check.openUnit("beta", beta);
        String canonical = SpendingFunction.of(spendingSpec, beta).spec();
        return new Design(alpha, sides, looks, this.spendingSpec, classical, canonical, beta, binding, power);
    }

    /** Power at the design drift, in (alpha / sides, 1). */
    public Design withPower(double power) {
        Check.openUnit("power", power);
        if (!(power > alpha / sides)) {
            throw new StatsException("power %s must exceed the one-sided level alpha / sides = %s", power, alpha / sides);
        }
        return new Design(alpha, sides, looks, spendingSpec, classical, futilitySpec, beta, binding, power);
    }

    public double alpha() {
        return alpha;
    }

    public int sides() {
        return sides;
    }

    /** A copy of the planned information fractions. */
    public double[] looks() {
        return looks.clone();
    }

    public int numberOfLooks() {
        return looks.length;
    }

    /** True when a spending function (not a classical shape) defines the efficacy boundary. */
    public boolean isSpending() {
        return classical == null;
    }

    /** Efficacy spending spec, or null for classical designs. */
    public String spendingSpec() {
        return spendingSpec;
    }

    /** The one-sided efficacy spending function at level alpha / sides; null for classical designs. */
    public SpendingFunction efficacySpending() {
        return classical == null ? SpendingFunction.of(spendingSpec, alpha / sides) : null;
    }

    /** Classical shape, or null for spending designs. */
    public ClassicalShape classical() {
        return classical;
    }

    public boolean hasFutility() {
        return futilitySpec != null;
    }

    /** Futility spending function at level beta; null without futility. */
    public SpendingFunction futilitySpending() {
        return futilitySpec == null ? null : SpendingFunction.of(futilitySpec, beta);
    }

    /** Total type II error spent by futility; NaN without futility. */
    public double beta() {
        return beta;
    }

    /** True when the futility boundary is binding (efficacy computed with it as stopping). */
    public boolean bindingFutility() {
        return futilitySpec != null && binding;
    }

    /** Power asked for: explicit, else 1 - beta with futility, else NaN. */
    public double power() {
        return power == power ? power : futilitySpec != null ? 1 - beta : Double.NaN;
    }

    void checkConsistent() {
        if (classical != null && futilitySpec != null) {
            throw new StatsException("classical %s boundaries take no futility; use a spending function for beta spending",
                    classical);
        }
        if (futilitySpec != null && power == power && Math.abs(power - (1 - beta)) > 1e-12) {
            throw new StatsException("power %s must equal 1 - beta = %s when futility spends beta", power, 1 - beta);
        }
        if (futilitySpec != null && !(1 - beta > alpha / sides)) {
            throw new StatsException("power 1 - beta = %s must exceed alpha / sides = %s", 1 - beta, alpha / sides);
        }
    }

    @Override
    public boolean equals(Object o) {
        return o instanceof Design d && d.alpha == alpha && d.sides == sides && Arrays.equals(d.looks, looks)
                && Objects.equals(d.spendingSpec, spendingSpec) && d.classical == classical
                && Objects.equals(d.futilitySpec, futilitySpec) && Double.compare(d.beta, beta) == 0
                && d.binding == binding && Double.compare(d.power, power) == 0;
    }

    @Override
    public int hashCode() {
        return Objects.hash(alpha, sides, Arrays.hashCode(looks), spendingSpec, classical, futilitySpec, beta, binding, power);
    }

    @Override
    public String toString() {
        return String.format(java.util.Locale.ROOT, "Design[alpha=%s, sides=%d, looks=%s, efficacy=%s, futility=%s]",
                alpha, sides, Arrays.toString(looks), classical != null ? classical : spendingSpec,
                futilitySpec == null ? "none" : futilitySpec + " beta " + beta + (binding ? " binding" : " non-binding"));
    }
}
