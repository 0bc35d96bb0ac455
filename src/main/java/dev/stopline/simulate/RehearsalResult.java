package dev.stopline.simulate;

import dev.stopline.plan.Plan;
import java.util.List;

/**
 * What a {@link Rehearsal} found.
 *
 * @param plan        the plan rehearsed
 * @param seed        the seed
 * @param trials      trials of the fast Z-scale engine (0 when it did not run)
 * @param dataTrials  trials of the data-level engine (0 when it did not run)
 * @param threads     worker threads used (never changes a figure)
 * @param zPlan       the Z-scale view of a group-sequential primary, or null
 * @param effects     one result per effect, in the order asked
 * @param samplePaths a few simulated Z paths at the largest effect (group-sequential), for charts; or null
 * @param calendar    the look calendar when a traffic forecast was given, or null
 */
public record RehearsalResult(Plan plan, long seed, long trials, long dataTrials, int threads, ZScalePlan zPlan,
                              List<EffectResult> effects, double[][] samplePaths, LookCalendar calendar) {
    public RehearsalResult {
        effects = List.copyOf(effects);
    }

    /**
     * The figures at one effect.
     *
     * @param effect     true absolute effect on the primary metric's scale
     * @param drift      theta at full information (group-sequential), NaN otherwise
     * @param exact      numerical integration (group-sequential), or null
     * @param monteCarlo the fast Z-scale Monte Carlo (group-sequential), or null
     * @param dataLevel  the data-level Monte Carlo, or null
     */
    public record EffectResult(double effect, double drift, Characteristics exact, Characteristics monteCarlo,
                               DataLevelEngine.Result dataLevel) {
        /** The figures reported first: Z-scale Monte Carlo, else exact, else data level. */
        public Characteristics headline() {
            return monteCarlo != null ? monteCarlo : exact != null ? exact : dataLevel.primary();
        }

        /** Where the headline came from: a Z-scale or data-level Monte Carlo, or numerical integration. */
        public String headlineEngine() {
            return monteCarlo != null ? "z-scale" : exact != null ? "numerical-integration" : "data-level";
        }
    }

    /** Decision dates at one effect, when there is a calendar. */
    public LookCalendar.DecisionDates decisionDates(EffectResult e) {
        if (calendar == null) {
            return null;
        }
        if (zPlan != null) {
            return calendar.decision((e.exact() != null ? e.exact() : e.headline()).stopLook());
        }
        return e.dataLevel() == null ? null : LookCalendar.fromDays(calendar.start(), e.dataLevel().stopDays());
    }
}
