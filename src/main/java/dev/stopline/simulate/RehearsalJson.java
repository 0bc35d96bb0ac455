package dev.stopline.simulate;

import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.SerializationFeature;
import dev.stopline.plan.Guardrail;
import dev.stopline.plan.Primary;
import java.io.UncheckedIOException;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * The JSON form of a {@link RehearsalResult}. Scripts depend on these keys:
 * {@code plan, trials, seed, effects[].effect, efficacyProbability, efficacyProbabilityStandardError,
 * futilityProbability, expectedUnitsPerArm, stopLookProbabilities, method} and, where numerical
 * integration also ran, {@code efficacyProbabilityExact}. Other keys are additions.
 */
public final class RehearsalJson {
    private RehearsalJson() {
    }

    public static String render(RehearsalResult r, List<String> notes) {
        try {
            return new ObjectMapper().enable(SerializationFeature.INDENT_OUTPUT).writeValueAsString(tree(r, notes));
        } catch (JsonProcessingException e) {
            throw new UncheckedIOException(e);
        }
    }

    static Map<String, Object> tree(RehearsalResult r, List<String> notes) {
        Primary p = r.plan().primary();
        Map<String, Object> root = new LinkedHashMap<>();
        root.put("plan", r.plan().experiment());
        root.put("trials", r.trials() > 0 ? r.trials() : r.dataTrials());
        root.put("seed", r.seed());
        root.put("primaryMethod", p.method().key());
        root.put("dataLevelTrials", r.dataTrials());
        if (r.zPlan() != null) {
            root.put("looks", looks(r.zPlan()));
        }
        List<Object> effects = new ArrayList<>();
        for (RehearsalResult.EffectResult e : r.effects()) {
            effects.add(effect(r, e));
        }
        root.put("effects", effects);
        if (r.calendar() != null) {
            List<Object> cal = new ArrayList<>();
            for (LookCalendar.Entry c : r.calendar().entries()) {
                Map<String, Object> m = new LinkedHashMap<>();
                m.put("look", c.label());
                m.put("informationFraction", c.fraction());
                m.put("unitsPerArm", c.unitsPerArm());
                m.put("expectedDate", c.expected().toString());
                m.put("earlyDate", c.early().toString());
                m.put("lateDate", c.late().toString());
                cal.add(m);
            }
            root.put("calendar", cal);
        }
        root.put("notes", notes);
        return root;
    }

    private static List<Object> looks(ZScalePlan z) {
        List<Object> out = new ArrayList<>();
        double[] t = z.timing();
        double[] b = z.efficacy();
        double[] a = z.futility();
        long[] n = z.unitsAtLook();
        for (int k = 0; k < t.length; k++) {
            Map<String, Object> m = new LinkedHashMap<>();
            m.put("look", k + 1);
            m.put("informationFraction", t[k]);
            m.put("unitsPerArm", n[k]);
            m.put("efficacyZ", finite(b[k]));
            m.put("futilityZ", finite(a[k]));
            out.add(m);
        }
        return out;
    }

    private static Map<String, Object> effect(RehearsalResult r, RehearsalResult.EffectResult e) {
        Map<String, Object> m = new LinkedHashMap<>();
        m.put("effect", e.effect());
        if (e.drift() == e.drift()) {
            m.put("drift", e.drift());
        }
        Characteristics h = e.headline();
        m.putAll(figures(h));
        m.put("method", h.method());
        m.put("engine", e.headlineEngine());
        if (e.exact() != null && h != e.exact()) {
            m.put("efficacyProbabilityExact", e.exact().efficacy());
            m.put("exact", figures(e.exact()));
        }
        if (e.dataLevel() != null && h != e.dataLevel().primary()) {
            m.put("dataLevel", dataLevel(r, e.dataLevel()));
        } else if (e.dataLevel() != null) {
            m.putAll(alarms(r, e.dataLevel()));
        }
        LookCalendar.DecisionDates d = r.decisionDates(e);
        if (d != null) {
            Map<String, Object> dd = new LinkedHashMap<>();
            dd.put("expected", d.expected().toString());
            dd.put("p10", d.early().toString());
            dd.put("p50", d.median().toString());
            dd.put("p90", d.late().toString());
            m.put("decisionDate", dd);
        }
        return m;
    }

    private static Map<String, Object> figures(Characteristics c) {
        Map<String, Object> m = new LinkedHashMap<>();
        m.put("efficacyProbability", c.efficacy());
        m.put("efficacyProbabilityStandardError", c.efficacySe());
        m.put("futilityProbability", c.futility());
        m.put("futilityProbabilityStandardError", c.futilitySe());
        m.put("expectedUnitsPerArm", c.expectedUnitsPerArm());
        m.put("expectedUnitsPerArmStandardError", c.expectedUnitsPerArmSe());
        Map<String, Object> q = new LinkedHashMap<>();
        long[] u = c.unitsQuantiles();
        q.put("p10", u[0]);
        q.put("p50", u[1]);
        q.put("p90", u[2]);
        m.put("unitsPerArmQuantiles", q);
        m.put("stopLookProbabilities", c.stopLook());
        if (c.trials() > 0) {
            m.put("trials", c.trials());
        }
        return m;
    }

    private static Map<String, Object> dataLevel(RehearsalResult r, DataLevelEngine.Result d) {
        Map<String, Object> m = new LinkedHashMap<>(figures(d.primary()));
        m.put("method", Characteristics.MONTE_CARLO);
        m.putAll(alarms(r, d));
        return m;
    }

    private static Map<String, Object> alarms(RehearsalResult r, DataLevelEngine.Result d) {
        Map<String, Object> m = new LinkedHashMap<>();
        List<Object> g = new ArrayList<>();
        List<Guardrail> gs = r.plan().guardrails();
        for (int i = 0; i < gs.size(); i++) {
            Map<String, Object> x = new LinkedHashMap<>();
            x.put("metric", gs.get(i).metric());
            x.put("alpha", gs.get(i).alpha());
            x.put("falseAlarmProbability", d.guardrailAlarm()[i]);
            x.put("falseAlarmProbabilityStandardError", d.guardrailAlarmSe()[i]);
            g.add(x);
        }
        m.put("guardrails", g);
        Map<String, Object> s = new LinkedHashMap<>();
        s.put("alpha", r.plan().sampleRatio().alpha());
        s.put("falseAlarmProbability", d.sampleRatioAlarm());
        s.put("falseAlarmProbabilityStandardError", d.sampleRatioAlarmSe());
        m.put("sampleRatio", s);
        m.put("noDecisionProbability", d.noDecision());
        if (d.overshoot() == d.overshoot()) {
            m.put("meanLookOvershoot", d.overshoot());
        }
        return m;
    }

    private static Double finite(double x) {
        return Double.isFinite(x) ? x : null;
    }
}
