package dev.stopline.monitor;

import dev.stopline.plan.MetricType;
import dev.stopline.plan.Method;
import dev.stopline.plan.Plan;
import dev.stopline.plan.Primary;
import dev.stopline.stats.groupseq.BoundarySet;
import dev.stopline.stats.groupseq.SampleSize;
import java.util.Map;

/**
 * How large an experiment may grow, and how far along it is.
 *
 * <p>Information is measured in effective units {@code n_c n_t / (n_c + n_t)}: the variance of a
 * difference of two means is {@code sigma^2 (1/n_c + 1/n_t)}, so this is the quantity information is
 * proportional to when both arms share a per-unit variance, and unequal arms count correctly. The
 * maximum comes from {@code maxUnitsPerArm}, read as the size of the largest arm with the other arms in
 * the planned proportion; or, when the plan gives {@code power} and {@code minimumEffect}, from the
 * fixed-horizon sample size inflated by the design's factor {@code R = I_max / I_fixed}. A sequential
 * probability ratio test sized from power is truncated at twice the fixed-horizon size (a choice of
 * ours, stated in the output; give {@code maxUnitsPerArm} to choose otherwise).
 */
public final class PlanSizing {
    private final long maxUnitsPerArm;
    private final double maxEffectiveUnits;
    private final boolean sizedFromPower;

    private PlanSizing(long maxUnitsPerArm, double maxEffectiveUnits, boolean sizedFromPower) {
        this.maxUnitsPerArm = maxUnitsPerArm;
        this.maxEffectiveUnits = maxEffectiveUnits;
        this.sizedFromPower = sizedFromPower;
    }

    /** Sizing of a validated plan; {@code boundaries} is the planned design's boundary set (group-sequential) or null. */
    public static PlanSizing of(Plan plan, BoundarySet boundaries) {
        Primary p = plan.primary();
        long perArm;
        boolean fromPower = p.maxUnitsPerArm() == null;
        if (!fromPower) {
            perArm = p.maxUnitsPerArm();
        } else {
            SampleSize size = SampleSize.of(p.alpha(), p.sides(), p.power());
            double fixed = fixedPerArm(size, p);
            perArm = p.method() == Method.GROUP_SEQUENTIAL
                    ? SampleSize.groupSequential(fixed, boundaries.inflationFactor())
                    : SampleSize.roundUp(2 * fixed);
        }
        Map<String, Double> w = plan.allocation();
        double wMax = w.values().stream().mapToDouble(Double::doubleValue).max().orElseThrow();
        double nc = perArm * w.get(plan.control()) / wMax;
        double nt = perArm * treatmentWeight(plan) / wMax;
        return new PlanSizing(perArm, nc * nt / (nc + nt), fromPower);
    }

    private static double fixedPerArm(SampleSize size, Primary p) {
        double d = p.minimumEffect();
        if (p.type() == MetricType.PROPORTION) {
            return size.proportions(p.baselineRate(), p.baselineRate() + d).control();
        }
        return size.means(p.sd(), d).control();
    }

    private static double treatmentWeight(Plan plan) {
        return plan.allocation().entrySet().stream().filter(e -> !e.getKey().equals(plan.control()))
                .mapToDouble(Map.Entry::getValue).findFirst().orElseThrow();
    }

    /** Effective units {@code n_c n_t / (n_c + n_t)}; 0 while an arm is empty. */
    public static double effectiveUnits(long control, long treatment) {
        return control + treatment == 0 ? 0 : (double) control * treatment / (control + treatment);
    }

    /** Information fraction of the given arm sizes. */
    public double informationFraction(long control, long treatment) {
        return effectiveUnits(control, treatment) / maxEffectiveUnits;
    }

    public long maxUnitsPerArm() {
        return maxUnitsPerArm;
    }

    public boolean sizedFromPower() {
        return sizedFromPower;
    }
}
