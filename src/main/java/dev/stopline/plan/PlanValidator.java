package dev.stopline.plan;

import dev.stopline.stats.StatsException;
import dev.stopline.stats.groupseq.SpendingFunction;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.regex.Pattern;

/**
 * The semantic rules of a stopping plan. {@link #validate(Plan)} returns every broken rule, each as a
 * {@link PlanProblem} whose rule text states what is required and what was found.
 *
 * <p>Rules: ranges of every level and rate; allocation weights &gt; 0 summing to 1 (within
 * {@value #SUM_TOLERANCE}); control an arm of the allocation; for group-sequential exactly one of
 * spending and boundary, looks strictly increasing in (0, 1] ending at 1, a classical boundary only
 * with equally spaced looks; sizing complete (maxUnitsPerArm, or power with minimumEffect and the
 * baseline of the metric type); blocks and keys that belong to another method or metric type are
 * rejected rather than ignored, because an ignored key is a silent misunderstanding; guardrail
 * metrics unique.
 */
public final class PlanValidator {
    /** Experiment ids: lower case, usable as Kafka key, file name and metric label; the wire format's rule. */
    public static final Pattern EXPERIMENT_ID = dev.stopline.wire.SnapshotParser.EXPERIMENT_ID;
    /** Arm and metric names. */
    public static final Pattern NAME = dev.stopline.wire.SnapshotParser.NAME;
    /** Allowed rounding when allocation weights are summed (1/3 + 1/3 + 1/3 written to 16 digits). */
    public static final double SUM_TOLERANCE = 1e-9;
    static final int MAX_DESCRIPTION = 4000;
    static final int MAX_OWNER = 200;
    private static final List<String> SPENDING_FAMILIES = List.of("obrien-fleming", "pocock", "hwang-shih-decani", "power");
    private static final double GRAMMAR_PROBE_ALPHA = 0.05;

    private final List<PlanProblem> problems = new ArrayList<>();

    private PlanValidator() {
    }

    /** Every rule the plan breaks; empty when the plan is valid. */
    public static List<PlanProblem> validate(Plan plan) {
        PlanValidator v = new PlanValidator();
        v.root(plan);
        return List.copyOf(v.problems);
    }

    /** Throws {@link PlanException} when {@link #validate} finds problems; returns the plan otherwise. */
    public static Plan requireValid(Plan plan) {
        List<PlanProblem> p = validate(plan);
        if (!p.isEmpty()) {
            throw new PlanException(p);
        }
        return plan;
    }

    /**
     * Whether {@code spec} is a spending function of the grammar {@value SpendingFunction#GRAMMAR}.
     * Returns null when it is, else the rule it breaks. Delegates to
     * {@link SpendingFunction#of(String, double)}, so that a plan passes validation exactly when the
     * engine can build its boundary; the grammar does not depend on the level, so any valid level does.
     */
    public static String spendingProblem(String spec) {
        try {
            SpendingFunction.of(spec, GRAMMAR_PROBE_ALPHA);
            return null;
        } catch (StatsException e) {
            int colon = spec.indexOf(':');
            String family = (colon < 0 ? spec : spec.substring(0, colon)).trim().toLowerCase(java.util.Locale.ROOT);
            return e.getMessage() + (SPENDING_FAMILIES.contains(family) ? "" : Suggest.hint(family, SPENDING_FAMILIES));
        }
    }

    // ---- root

    private void root(Plan p) {
        if (required("experiment", p.experiment()) && !EXPERIMENT_ID.matcher(p.experiment()).matches()) {
            add("experiment", "must match " + EXPERIMENT_ID.pattern() + ", got " + quote(p.experiment()));
        }
        allocation(p.allocation());
        if (required("control", p.control()) && p.allocation() != null
                && !p.allocation().containsKey(p.control())) {
            add("control", quote(p.control()) + " is not an arm of allocation (arms: "
                    + String.join(", ", p.allocation().keySet()) + ")" + Suggest.hint(p.control(), p.allocation().keySet()));
        }
        if (required("primary", p.primary())) {
            primary(p.primary());
        }
        guardrails(p.guardrails());
        if (p.sampleRatio() != null && required("sampleRatio.alpha", p.sampleRatio().alpha())) {
            openUnit("sampleRatio.alpha", p.sampleRatio().alpha());
        }
        maxLength("description", p.description(), MAX_DESCRIPTION);
        maxLength("owner", p.owner(), MAX_OWNER);
    }

    private void allocation(Map<String, Double> a) {
        if (!required("allocation", a)) {
            return;
        }
        if (a.size() != 2) {
            add("allocation", "needs exactly 2 arms (a control and one treatment; run one plan per treatment "
                    + "to compare more), got " + a.size());
        }
        double sum = 0;
        boolean complete = true;
        for (Map.Entry<String, Double> e : a.entrySet()) {
            String at = "allocation." + e.getKey();
            if (!NAME.matcher(e.getKey()).matches()) {
                add(at, "arm name must match " + NAME.pattern());
            }
            complete &= required(at, e.getValue()) && positive(at, e.getValue());
            sum += e.getValue() == null ? 0 : e.getValue();
        }
        if (complete && a.size() >= 2 && Math.abs(sum - 1) > SUM_TOLERANCE) {
            add("allocation", "weights must sum to 1, got " + num(sum));
        }
    }

    // ---- primary

    private void primary(Primary p) {
        if (required("primary.metric", p.metric())) {
            name("primary.metric", p.metric());
        }
        required("primary.type", p.type());
        if (required("primary.alpha", p.alpha())) {
            openUnit("primary.alpha", p.alpha());
        }
        if (required("primary.sides", p.sides()) && p.sides() != 1 && p.sides() != 2) {
            add("primary.sides", "must be 1 or 2, got " + p.sides());
        }
        if (required("primary.method", p.method())) {
            switch (p.method()) {
                case GROUP_SEQUENTIAL -> groupSequential(p);
                case SPRT -> sprt(p);
                case MIXTURE_SPRT -> mixtureSprt(p);
            }
        }
        sizing(p);
    }

    private void groupSequential(Primary p) {
        if (p.spending() == null && p.boundary() == null) {
            add("primary", "method group-sequential needs exactly one of spending or boundary, got neither");
        } else if (p.spending() != null && p.boundary() != null) {
            add("primary", "give exactly one of spending or boundary, got both");
        }
        if (p.spending() != null) {
            spending("primary.spending", p.spending());
        }
        boolean looksOk = required("primary.looks", p.looks(), "required for method group-sequential") && looks(p.looks());
        if (looksOk && p.boundary() != null && !p.looks().isEquallySpaced()) {
            add("primary.boundary", p.boundary().key() + " is a classical boundary for equally spaced looks k/K, got looks "
                    + p.looks().fractions() + "; use spending: " + p.boundary().key() + " for unequal looks");
        }
        if (p.futility() != null && p.boundary() != null && p.spending() == null) {
            add("primary.futility", "a classical " + p.boundary().key() + " boundary has no futility part; use spending: "
                    + p.boundary().key() + " with futility");
        } else if (p.futility() != null) {
            futility(p.futility());
        }
        forbidden("primary.sprt", p.sprt(), "only for method sprt");
        forbidden("primary.mixtureSprt", p.mixtureSprt(), "only for method mixture-sprt");
    }

    private boolean looks(Looks looks) {
        List<Double> t = looks.fractions();
        boolean ok = true;
        for (int i = 0; i < t.size(); i++) {
            double x = t.get(i);
            if (!(x > 0 && x <= 1)) {
                add("primary.looks[" + i + "]", "information fraction must be in (0, 1], got " + num(x));
                ok = false;
            } else if (i > 0 && !(x > t.get(i - 1))) {
                add("primary.looks", "must be strictly increasing, got " + num(x) + " after " + num(t.get(i - 1)));
                ok = false;
            }
        }
        double last = t.get(t.size() - 1);
        if (ok && Math.abs(last - 1) > Looks.SPACING_TOLERANCE) {
            add("primary.looks", "the last look must be at information fraction 1, got " + num(last));
            ok = false;
        }
        return ok;
    }

    private void futility(Futility f) {
        if (required("primary.futility.spending", f.spending())) {
            spending("primary.futility.spending", f.spending());
        }
        if (required("primary.futility.beta", f.beta())) {
            openUnit("primary.futility.beta", f.beta());
        }
        required("primary.futility.binding", f.binding());
    }

    private void sprt(Primary p) {
        notForSequentialTests(p, "sprt");
        forbidden("primary.mixtureSprt", p.mixtureSprt(), "only for method mixture-sprt");
        Sprt s = p.sprt();
        if (!required("primary.sprt", s, "required for method sprt: {minimumEffect, beta}")) {
            return;
        }
        if (required("primary.sprt.minimumEffect", s.minimumEffect())) {
            effect("primary.sprt.minimumEffect", s.minimumEffect(), p.type());
        }
        if (required("primary.sprt.beta", s.beta())) {
            openUnit("primary.sprt.beta", s.beta());
        }
    }

    private void mixtureSprt(Primary p) {
        notForSequentialTests(p, "mixture-sprt");
        forbidden("primary.sprt", p.sprt(), "only for method sprt");
        MixtureSprt m = p.mixtureSprt();
        if (required("primary.mixtureSprt", m, "required for method mixture-sprt: {tau}")
                && required("primary.mixtureSprt.tau", m.tau())) {
            positive("primary.mixtureSprt.tau", m.tau());
        }
    }

    private void notForSequentialTests(Primary p, String method) {
        String why = "only for method group-sequential; " + method + " checks every snapshot";
        forbidden("primary.spending", p.spending(), why);
        forbidden("primary.boundary", p.boundary(), why);
        forbidden("primary.looks", p.looks(), why);
        forbidden("primary.futility", p.futility(), why);
    }

    private void sizing(Primary p) {
        MetricType type = p.type();
        boolean proportion = type == MetricType.PROPORTION;
        if (type != null) {
            String other = proportion ? "only for type mean or ratio (a proportion's spread follows from baselineRate)"
                    : "only for type proportion (use baselineMean and sd for " + type.key() + ")";
            forbidden(proportion ? "primary.baselineMean" : "primary.baselineRate",
                    proportion ? p.baselineMean() : p.baselineRate(), other);
            if (proportion) {
                forbidden("primary.sd", p.sd(), other);
            }
        }
        ranges(p);
        if (p.maxUnitsPerArm() != null) {
            if (p.maxUnitsPerArm() < 2) {
                add("primary.maxUnitsPerArm", "must be at least 2, got " + p.maxUnitsPerArm());
            }
            forbidden("primary.power", p.power(), "give either maxUnitsPerArm or power (to size from), not both");
            return;
        }
        if (p.power() == null) {
            add("primary.maxUnitsPerArm", "required, or power with minimumEffect and "
                    + (type == null ? "the baseline" : proportion ? "baselineRate" : "baselineMean and sd")
                    + " to size from");
            return;
        }
        String why = "required to size from power";
        required("primary.minimumEffect", p.minimumEffect(), why);
        if (proportion) {
            required("primary.baselineRate", p.baselineRate(), why);
        } else if (type != null) {
            required("primary.baselineMean", p.baselineMean(), why);
            required("primary.sd", p.sd(), why);
        }
    }

    private void ranges(Primary p) {
        boolean alphaOk = p.alpha() != null && p.alpha() > 0 && p.alpha() < 1;
        if (p.power() != null && alphaOk && !(p.power() > p.alpha() && p.power() < 1)) {
            add("primary.power", "must be in (alpha, 1) = (" + num(p.alpha()) + ", 1), got " + num(p.power()));
        }
        if (p.minimumEffect() != null) {
            effect("primary.minimumEffect", p.minimumEffect(), p.type());
        }
        if (p.baselineRate() != null) {
            openUnit("primary.baselineRate", p.baselineRate());
        }
        if (p.baselineMean() != null && !Double.isFinite(p.baselineMean())) {
            add("primary.baselineMean", "must be finite, got " + num(p.baselineMean()));
        }
        if (p.sd() != null) {
            positive("primary.sd", p.sd());
        }
    }

    private void effect(String at, double d, MetricType type) {
        if (type == MetricType.PROPORTION) {
            openUnit(at, d);
        } else {
            positive(at, d);
        }
    }

    // ---- guardrails

    private void guardrails(List<Guardrail> list) {
        Map<String, Integer> first = new HashMap<>();
        for (int i = 0; i < list.size(); i++) {
            String at = "guardrails[" + i + "]";
            Guardrail g = list.get(i);
            if (required(at + ".metric", g.metric()) && name(at + ".metric", g.metric())) {
                Integer j = first.putIfAbsent(g.metric(), i);
                if (j != null) {
                    add(at + ".metric", quote(g.metric()) + " is already a guardrail (guardrails[" + j + "])");
                }
            }
            required(at + ".type", g.type());
            required(at + ".harmful", g.harmful(), "required: increase or decrease");
            if (required(at + ".margin", g.margin(), "required: the tolerated harm, >= 0")
                    && !(g.margin() >= 0 && g.margin() < Double.POSITIVE_INFINITY)) {
                add(at + ".margin", "must be finite and >= 0, got " + num(g.margin()));
            }
            required(at + ".relative", g.relative());
            if (required(at + ".alpha", g.alpha())) {
                openUnit(at + ".alpha", g.alpha());
            }
            if (g.tau() != null) {
                positive(at + ".tau", g.tau());
            } else if (g.margin() != null && g.margin() == 0) {
                add(at + ".tau", "required when margin is 0 (tau defaults to the margin)");
            }
        }
    }

    // ---- helpers: each returns whether the value passed, so callers can chain dependent checks

    private void spending(String at, String spec) {
        String problem = spendingProblem(spec);
        if (problem != null) {
            add(at, problem);
        }
    }

    private boolean required(String at, Object value) {
        return required(at, value, "required");
    }

    private boolean required(String at, Object value, String rule) {
        if (value == null) {
            add(at, rule);
            return false;
        }
        return true;
    }

    private void forbidden(String at, Object value, String rule) {
        if (value != null) {
            add(at, rule);
        }
    }

    private boolean openUnit(String at, double x) {
        if (x > 0 && x < 1) {
            return true;
        }
        add(at, "must be in (0, 1), got " + num(x));
        return false;
    }

    private boolean positive(String at, double x) {
        if (x > 0 && x < Double.POSITIVE_INFINITY) {
            return true;
        }
        add(at, "must be finite and > 0, got " + num(x));
        return false;
    }

    private boolean name(String at, String name) {
        if (NAME.matcher(name).matches()) {
            return true;
        }
        add(at, "must match " + NAME.pattern() + ", got " + quote(name));
        return false;
    }

    private void maxLength(String at, String s, int max) {
        if (s != null && s.length() > max) {
            add(at, "must be at most " + max + " characters, got " + s.length());
        }
    }

    private void add(String at, String rule) {
        problems.add(new PlanProblem(at, rule));
    }

    private static String quote(String s) {
        return "\"" + (s.length() > 60 ? s.substring(0, 60) + "..." : s) + "\"";
    }

    /** Shortest round-trip decimal, without a trailing ".0" on whole numbers. */
    static String num(double x) {
        if (x == Math.rint(x) && Math.abs(x) < 1e15) {
            return Long.toString((long) x);
        }
        return Double.toString(x);
    }
}
