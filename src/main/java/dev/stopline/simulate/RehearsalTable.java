package dev.stopline.simulate;

import dev.stopline.plan.Guardrail;
import dev.stopline.plan.Primary;
import java.util.List;
import java.util.Locale;

/**
 * The plain-text form of a {@link RehearsalResult}: every figure is labelled with the method that
 * produced it, {@code [exact]} (numerical integration) or {@code [MC]} (Monte Carlo, with its
 * standard error after {@code ±}).
 */
public final class RehearsalTable {
    private RehearsalTable() {
    }

    public static String render(RehearsalResult r, List<String> notes) {
        StringBuilder s = new StringBuilder();
        Primary p = r.plan().primary();
        s.append(f("Rehearsal of %s: primary %s (%s, %s, alpha %s, %d-sided)%n", r.plan().experiment(), p.metric(),
                p.type().key(), p.method().key(), p.alpha(), p.sides()));
        s.append(f("seed %d", r.seed()));
        if (r.trials() > 0) {
            s.append(f("; z-scale Monte Carlo %,d trials per effect", r.trials()));
        }
        if (r.dataTrials() > 0) {
            s.append(f("; data-level Monte Carlo %,d trials per effect (the daemon's evaluator on every snapshot)",
                    r.dataTrials()));
        }
        s.append(System.lineSeparator());
        if (r.zPlan() != null) {
            looks(s, r.zPlan());
        }
        for (RehearsalResult.EffectResult e : r.effects()) {
            effect(s, r, e);
        }
        if (r.calendar() != null) {
            s.append(System.lineSeparator()).append("Look calendar (if the experiment gets that far; 10%-90% range)")
                    .append(System.lineSeparator());
            for (LookCalendar.Entry c : r.calendar().entries()) {
                s.append(f("  %-13s t=%.3f %,9d units/arm  expected %s  (%s .. %s)%n", c.label(), c.fraction(),
                        c.unitsPerArm(), c.expected(), c.early(), c.late()));
            }
        }
        if (!notes.isEmpty()) {
            s.append(System.lineSeparator());
            for (String n : notes) {
                s.append("note: ").append(n).append(System.lineSeparator());
            }
        }
        return s.toString();
    }

    private static void looks(StringBuilder s, ZScalePlan z) {
        double[] t = z.timing();
        double[] b = z.efficacy();
        double[] a = z.futility();
        long[] n = z.unitsAtLook();
        String abs = z.sides() == 2 ? "|z|" : "z";
        s.append(System.lineSeparator()).append(f("%-22s", "planned look"));
        for (int k = 0; k < t.length; k++) {
            s.append(f("%10d", k + 1));
        }
        s.append(System.lineSeparator()).append(f("%-22s", "information fraction"));
        for (double x : t) {
            s.append(f("%10.3f", x));
        }
        s.append(System.lineSeparator()).append(f("%-22s", "units per arm"));
        for (long x : n) {
            s.append(f("%,10d", x));
        }
        s.append(System.lineSeparator()).append(f("%-22s", "efficacy if " + abs + " >="));
        for (double x : b) {
            s.append(f("%10.3f", x));
        }
        if (z.hasFutility()) {
            s.append(System.lineSeparator()).append(f("%-22s", "futility if " + abs + " <="));
            for (double x : a) {
                s.append(f("%10.3f", x));
            }
        }
        s.append(System.lineSeparator());
    }

    private static void effect(StringBuilder s, RehearsalResult r, RehearsalResult.EffectResult e) {
        s.append(System.lineSeparator());
        s.append(f("effect %s%s%n", fmt(e.effect()), e.drift() == e.drift() ? f("  (drift theta %.3f)", e.drift()) : ""));
        String label = e.effect() == 0 ? "P(efficacy) = type I error" : "P(efficacy) = power";
        if (e.exact() != null) {
            row(s, "[exact]", label, e.exact());
        }
        if (e.monteCarlo() != null) {
            row(s, "[MC z-scale]", label, e.monteCarlo());
        }
        if (e.dataLevel() != null) {
            DataLevelEngine.Result d = e.dataLevel();
            row(s, "[MC data-level]", label, d.primary());
            List<Guardrail> g = r.plan().guardrails();
            for (int i = 0; i < g.size(); i++) {
                s.append(f("  %-16s guardrail %s false alarm %.4f ± %.4f (alpha %s)%n", "[MC data-level]",
                        g.get(i).metric(), d.guardrailAlarm()[i], d.guardrailAlarmSe()[i], g.get(i).alpha()));
            }
            s.append(f("  %-16s sample-ratio false alarm %.4f ± %.4f (alpha %s, checked at every snapshot)%n",
                    "[MC data-level]", d.sampleRatioAlarm(), d.sampleRatioAlarmSe(), r.plan().sampleRatio().alpha()));
            if (d.overshoot() == d.overshoot()) {
                s.append(f("  %-16s looks land on average %.3f past their planned fraction (daily snapshots)%n",
                        "[MC data-level]", d.overshoot()));
            }
            if (d.noDecision() > 0) {
                s.append(f("  %-16s no decision within the horizon %.4f%n", "[MC data-level]", d.noDecision()));
            }
        }
        LookCalendar.DecisionDates dd = r.decisionDates(e);
        if (dd != null) {
            s.append(f("  %-16s decision expected %s, 10%%/50%%/90%%: %s / %s / %s%n", "[calendar]", dd.expected(),
                    dd.early(), dd.median(), dd.late()));
        }
    }

    private static void row(StringBuilder s, String method, String label, Characteristics c) {
        boolean mc = c.trials() > 0;
        s.append(f("  %-16s %s %s   P(futility) %s%n", method, label, prob(c.efficacy(), c.efficacySe(), mc),
                prob(c.futility(), c.futilitySe(), mc)));
        long[] q = c.unitsQuantiles();
        s.append(f("  %-16s units/arm: expected %s, 10%%/50%%/90%% %,d / %,d / %,d%n", method,
                mc ? f("%,.0f ± %,.0f", c.expectedUnitsPerArm(), c.expectedUnitsPerArmSe())
                        : f("%,.0f", c.expectedUnitsPerArm()), q[0], q[1], q[2]));
        StringBuilder stops = new StringBuilder();
        double[] st = c.stopLook();
        int shown = Math.min(st.length, 12);
        for (int k = 0; k < shown; k++) {
            stops.append(f(k == 0 ? "%.4f" : " %.4f", st[k]));
        }
        if (st.length > shown) {
            stops.append(f(" ... (%d in all)", st.length));
        }
        s.append(f("  %-16s stops at look 1..%d: %s%n", method, st.length, stops));
    }

    private static String prob(double p, double se, boolean mc) {
        return mc ? f("%.4f ± %.4f", p, se) : f("%.5f", p);
    }

    private static String fmt(double x) {
        return x == Math.rint(x) && Math.abs(x) < 1e15 ? Long.toString((long) x) : Double.toString(x);
    }

    private static String f(String format, Object... args) {
        return String.format(Locale.ROOT, format, args);
    }
}
