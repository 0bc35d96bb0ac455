package dev.stopline.stats.groupseq;

import dev.stopline.stats.Check;
import dev.stopline.stats.Normal;
import dev.stopline.stats.StatsException;
import java.math.BigDecimal;
import java.util.Locale;
import java.util.Objects;

/**
 * A one-sided error spending function alpha(t): the cumulative type I (or, for futility, type II)
 * error allowed to be spent by information fraction {@code t} (Lan &amp; DeMets 1983 [1]).
 *
 * <p>Families, each with {@code alpha(0) = 0} and {@code alpha(1) = alpha}:
 * <ul>
 *   <li>O'Brien-Fleming type [1]: {@code alpha(t) = 2 - 2 Phi(z_{1-alpha/2} / sqrt t)};</li>
 *   <li>Pocock type [1]: {@code alpha(t) = alpha ln(1 + (e - 1) t)};</li>
 *   <li>Hwang-Shih-DeCani [2]: {@code alpha(t) = alpha (1 - e^{-gamma t}) / (1 - e^{-gamma})}, and
 *       {@code alpha t} for {@code gamma = 0} (the limit); gamma = -4 resembles O'Brien-Fleming,
 *       gamma = 1 resembles Pocock;</li>
 *   <li>power family [3]: {@code alpha(t) = alpha t^rho}, {@code rho > 0}.</li>
 * </ul>
 *
 * <p>Two-sided convention: a two-sided symmetric design at total level {@code alpha} spends
 * {@code alpha / 2} per side and uses one function of this class at level {@code alpha / 2} for each
 * side; the O'Brien-Fleming-type function per side is then {@code 2 - 2 Phi(z_{1-alpha/4} / sqrt t)}.
 * {@link #alpha()} is therefore always the level this one-sided function spends.
 *
 * <p>References:
 * <ol>
 *   <li>Lan KKG, DeMets DL (1983). Discrete sequential boundaries for clinical trials.
 *       Biometrika 70(3):659-663. doi:10.1093/biomet/70.3.659</li>
 *   <li>Hwang IK, Shih WJ, DeCani JS (1990). Group sequential designs using a family of type I error
 *       probability spending functions. Statistics in Medicine 9(12):1439-1445. doi:10.1002/sim.4780091207</li>
 *   <li>Kim K, DeMets DL (1987). Design and analysis of group sequential tests based on the type I
 *       error spending rate function. Biometrika 74(1):149-154. doi:10.1093/biomet/74.1.149</li>
 * </ol>
 */
public final class SpendingFunction {
    /** The grammar of {@link #of(String, double)}, quoted in every parse error. */
    public static final String GRAMMAR =
            "obrien-fleming | pocock | hwang-shih-decani:GAMMA (finite, |GAMMA| <= 20) | power:RHO (finite, RHO > 0)";

    /**
     * Largest |gamma| accepted. Measured: at gamma = 40 with 20 looks the last increment
     * alpha - alpha(0.95) cancels to 0 in double precision and the last bound becomes infinite; up to
     * 20 a sweep of 8000 designs (alpha, sides, K, families, beta, binding) computed without failure.
     */
    static final double MAX_ABS_GAMMA = 20;

    private enum Family { OBRIEN_FLEMING, POCOCK, HWANG_SHIH_DECANI, POWER }

    private final Family family;
    private final double alpha;
    private final double parameter;
    /** O'Brien-Fleming: z_{1-alpha/2}; Hwang-Shih-DeCani: 1 - e^{-gamma} as -expm1(-gamma); else unused. */
    private final double constant;

    private SpendingFunction(Family family, double alpha, double parameter, double constant) {
        this.family = family;
        this.alpha = alpha;
        this.parameter = parameter;
        this.constant = constant;
    }

    /** O'Brien-Fleming type {@code 2 - 2 Phi(z_{1-alpha/2} / sqrt t)} (Lan &amp; DeMets 1983). */
    public static SpendingFunction obrienFlemingType(double alpha) {
        checkAlpha(alpha);
        return new SpendingFunction(Family.OBRIEN_FLEMING, alpha, Double.NaN, Normal.upperQuantile(alpha / 2));
    }

    /** Pocock type {@code alpha ln(1 + (e - 1) t)} (Lan &amp; DeMets 1983). */
    public static SpendingFunction pocockType(double alpha) {
        checkAlpha(alpha);
        return new SpendingFunction(Family.POCOCK, alpha, Double.NaN, Double.NaN);
    }

    /** Hwang-Shih-DeCani {@code alpha (1 - e^{-gamma t}) / (1 - e^{-gamma})}, linear at gamma = 0. */
    public static SpendingFunction hwangShihDeCani(double alpha, double gamma) {
        checkAlpha(alpha);
        if (!(Math.abs(gamma) <= MAX_ABS_GAMMA)) {
            throw new StatsException("Hwang-Shih-DeCani gamma %s must be finite with |gamma| <= %s", gamma, MAX_ABS_GAMMA);
        }
        return new SpendingFunction(Family.HWANG_SHIH_DECANI, alpha, gamma, -Math.expm1(-gamma));
    }

    /** Power family {@code alpha t^rho}, rho &gt; 0 (Kim &amp; DeMets 1987). */
    public static SpendingFunction power(double alpha, double rho) {
        checkAlpha(alpha);
        Check.positive("power-family rho", rho);
        return new SpendingFunction(Family.POWER, alpha, rho, Double.NaN);
    }

    /**
     * Parses a spec of the grammar {@value #GRAMMAR}, for example {@code "hwang-shih-decani:-4"} or
     * {@code "power:3"}; case and surrounding blanks are ignored.
     */
    public static SpendingFunction of(String spec, double alpha) {
        if (spec == null) {
            throw new StatsException("spending function spec is null; expected %s", GRAMMAR);
        }
        String s = spec.trim().toLowerCase(Locale.ROOT);
        int colon = s.indexOf(':');
        String name = colon < 0 ? s : s.substring(0, colon);
        String arg = colon < 0 ? null : s.substring(colon + 1).trim();
        switch (name) {
            case "obrien-fleming":
            case "pocock":
                if (arg != null) {
                    throw new StatsException("spending function '%s' takes no parameter; expected %s", spec, GRAMMAR);
                }
                return name.equals("pocock") ? pocockType(alpha) : obrienFlemingType(alpha);
            case "hwang-shih-decani":
                return hwangShihDeCani(alpha, parameter(spec, arg));
            case "power":
                return power(alpha, parameter(spec, arg));
            default:
                throw new StatsException("unknown spending function '%s'; expected %s", spec, GRAMMAR);
        }
    }

    private static double parameter(String spec, String arg) {
        if (arg == null || arg.isEmpty()) {
            throw new StatsException("spending function '%s' needs a parameter after ':'; expected %s", spec, GRAMMAR);
        }
        try {
            return Double.parseDouble(arg);
        } catch (NumberFormatException e) {
            throw new StatsException("spending function '%s' has a parameter that is not a number; expected %s", spec, GRAMMAR);
        }
    }

    private static void checkAlpha(double alpha) {
        Check.openUnit("spending level alpha", alpha);
    }

    /** The same family and parameter at another level (for example beta, or alpha / 2 per side). */
    public SpendingFunction withAlpha(double newAlpha) {
        switch (family) {
            case OBRIEN_FLEMING: return obrienFlemingType(newAlpha);
            case POCOCK: return pocockType(newAlpha);
            case HWANG_SHIH_DECANI: return hwangShihDeCani(newAlpha, parameter);
            default: return power(newAlpha, parameter);
        }
    }

    /** alpha(t): 0 for {@code t <= 0}, {@link #alpha()} for {@code t >= 1}, NaN rejected. */
    public double cumulative(double t) {
        if (t != t) {
            throw new StatsException("information fraction %s must not be NaN", t);
        }
        if (t <= 0) {
            return 0;
        }
        if (t >= 1) {
            return alpha;
        }
        switch (family) {
            case OBRIEN_FLEMING: return Math.min(alpha, 2 * Normal.upperTail(constant / Math.sqrt(t)));
            case POCOCK: return alpha * Math.log1p(Math.expm1(1) * t);
            case HWANG_SHIH_DECANI: return parameter == 0 ? alpha * t : alpha * (-Math.expm1(-parameter * t)) / constant;
            default: return alpha * Math.pow(t, parameter);
        }
    }

    /** The level spent by t = 1. */
    public double alpha() {
        return alpha;
    }

    /** Canonical spec, parseable by {@link #of(String, double)}, e.g. {@code "hwang-shih-decani:-4"}. */
    public String spec() {
        switch (family) {
            case OBRIEN_FLEMING: return "obrien-fleming";
            case POCOCK: return "pocock";
            case HWANG_SHIH_DECANI: return "hwang-shih-decani:" + plain(parameter);
            default: return "power:" + plain(parameter);
        }
    }

    private static String plain(double x) {
        return BigDecimal.valueOf(x).stripTrailingZeros().toPlainString();
    }

    @Override
    public boolean equals(Object o) {
        return o instanceof SpendingFunction f && f.family == family && Double.compare(f.alpha, alpha) == 0
                && Double.compare(f.parameter, parameter) == 0;
    }

    @Override
    public int hashCode() {
        return Objects.hash(family, alpha, parameter);
    }

    @Override
    public String toString() {
        return spec() + " at alpha " + alpha;
    }
}
