package dev.stopline.plan;

import com.fasterxml.jackson.databind.JsonNode;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.Iterator;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Set;
import java.util.function.Function;
import java.util.stream.Collectors;

/**
 * Turns a parsed JSON/YAML tree into a {@link Plan}, by hand, key by key: no reflection, no
 * polymorphic types, nothing in the document can name a Java class. Records every structural
 * problem (unknown key, wrong type, unknown enum value) and binds what it can, leaving {@code null}
 * where a value is missing or unusable; defaults are filled in here.
 */
final class PlanBinder {
    static final Set<String> ROOT_KEYS = keys("experiment", "allocation", "control", "primary", "guardrails",
            "sampleRatio", "description", "owner");
    static final Set<String> PRIMARY_KEYS = keys("metric", "type", "method", "alpha", "sides", "spending",
            "boundary", "looks", "maxUnitsPerArm", "power", "minimumEffect", "baselineRate", "baselineMean", "sd",
            "futility", "sprt", "mixtureSprt");
    static final Set<String> FUTILITY_KEYS = keys("spending", "beta", "binding");
    static final Set<String> SPRT_KEYS = keys("minimumEffect", "beta");
    static final Set<String> MIXTURE_KEYS = keys("tau");
    static final Set<String> GUARDRAIL_KEYS = keys("metric", "type", "harmful", "margin", "relative", "alpha", "tau");
    static final Set<String> SAMPLE_RATIO_KEYS = keys("alpha");

    /** Largest integer a double holds exactly; sizes above it are typos. */
    private static final double MAX_EXACT = 9.007199254740992E15;

    private final List<PlanProblem> problems = new ArrayList<>();
    private final Set<String> unusable = new java.util.HashSet<>();

    List<PlanProblem> problems() {
        return problems;
    }

    /** Paths whose value was present but unusable (and so bound as null): semantic checks there are moot. */
    Set<String> unusable() {
        return unusable;
    }

    private void bad(String path, String rule) {
        problems.add(new PlanProblem(path, rule));
        unusable.add(path);
    }

    Plan plan(JsonNode root) {
        if (!root.isObject()) {
            bad(PlanProblem.DOCUMENT, "must be a mapping of keys to values, got " + kind(root));
            return null;
        }
        keysKnown(root, "", ROOT_KEYS);
        JsonNode sr = object(root, "", "sampleRatio");
        return new Plan(
                string(root, "", "experiment"),
                allocation(root),
                string(root, "", "control"),
                primary(object(root, "", "primary")),
                guardrails(root),
                sr == null ? SampleRatio.defaults() : sampleRatio(sr),
                string(root, "", "description"),
                string(root, "", "owner"));
    }

    private Map<String, Double> allocation(JsonNode root) {
        JsonNode a = object(root, "", "allocation");
        if (a == null) {
            return null;
        }
        Map<String, Double> weights = new LinkedHashMap<>();
        for (Map.Entry<String, JsonNode> e : a.properties()) {
            weights.put(e.getKey(), number(a, "allocation", e.getKey()));
        }
        return weights;
    }

    private Primary primary(JsonNode p) {
        if (p == null) {
            return null;
        }
        String at = "primary";
        keysKnown(p, at, PRIMARY_KEYS);
        Long sides = integer(p, at, "sides");
        return new Primary(
                string(p, at, "metric"),
                choice(p, at, "type", MetricType.values(), MetricType::key),
                choice(p, at, "method", Method.values(), Method::key),
                number(p, at, "alpha"),
                sides == null ? (has(p, "sides") ? null : Primary.DEFAULT_SIDES) : clampToInt(sides),
                string(p, at, "spending"),
                choice(p, at, "boundary", Boundary.values(), Boundary::key),
                looks(p),
                integer(p, at, "maxUnitsPerArm"),
                number(p, at, "power"),
                number(p, at, "minimumEffect"),
                number(p, at, "baselineRate"),
                number(p, at, "baselineMean"),
                number(p, at, "sd"),
                futility(object(p, at, "futility")),
                sprt(object(p, at, "sprt")),
                mixture(object(p, at, "mixtureSprt")));
    }

    private Looks looks(JsonNode p) {
        JsonNode n = p.get("looks");
        String at = "primary.looks";
        if (n == null || n.isNull()) {
            return null;
        }
        if (n.isIntegralNumber()) {
            long k = n.asLong();
            if (!n.canConvertToLong() || k < 1 || k > Looks.MAX_LOOKS) {
                bad(at, "number of looks must be in [1, " + Looks.MAX_LOOKS + "], got " + n);
                return null;
            }
            return Looks.equallySpaced((int) k);
        }
        if (!n.isArray()) {
            bad(at,
                    "must be a list of information fractions or an integer number of looks, got " + kind(n));
            return null;
        }
        if (n.size() == 0 || n.size() > Looks.MAX_LOOKS) {
            bad(at, "must hold 1 to " + Looks.MAX_LOOKS + " looks, got " + n.size());
            return null;
        }
        List<Double> t = new ArrayList<>();
        for (int i = 0; i < n.size(); i++) {
            if (!n.get(i).isNumber()) {
                bad(at + "[" + i + "]", "must be a number, got " + kind(n.get(i)));
                unusable.add(at);
                return null;
            }
            t.add(n.get(i).doubleValue());
        }
        return new Looks(t);
    }

    private Futility futility(JsonNode f) {
        if (f == null) {
            return null;
        }
        String at = "primary.futility";
        keysKnown(f, at, FUTILITY_KEYS);
        return new Futility(string(f, at, "spending"),
                orDefault(f, "beta", number(f, at, "beta"), Futility.DEFAULT_BETA),
                orDefault(f, "binding", bool(f, at, "binding"), Boolean.FALSE));
    }

    private Sprt sprt(JsonNode s) {
        if (s == null) {
            return null;
        }
        String at = "primary.sprt";
        keysKnown(s, at, SPRT_KEYS);
        return new Sprt(number(s, at, "minimumEffect"), number(s, at, "beta"));
    }

    private MixtureSprt mixture(JsonNode m) {
        if (m == null) {
            return null;
        }
        String at = "primary.mixtureSprt";
        keysKnown(m, at, MIXTURE_KEYS);
        return new MixtureSprt(number(m, at, "tau"));
    }

    private List<Guardrail> guardrails(JsonNode root) {
        JsonNode g = root.get("guardrails");
        if (g == null || g.isNull()) {
            return List.of();
        }
        if (!g.isArray()) {
            bad("guardrails", "must be a list, got " + kind(g));
            return List.of();
        }
        List<Guardrail> out = new ArrayList<>();
        for (int i = 0; i < g.size(); i++) {
            String at = "guardrails[" + i + "]";
            JsonNode n = g.get(i);
            if (!n.isObject()) {
                bad(at, "must be a mapping, got " + kind(n));
                out.add(new Guardrail(null, null, null, null, null, null, null)); // keeps the indices of later items
                continue;
            }
            keysKnown(n, at, GUARDRAIL_KEYS);
            out.add(new Guardrail(string(n, at, "metric"),
                    choice(n, at, "type", MetricType.values(), MetricType::key),
                    choice(n, at, "harmful", Harm.values(), Harm::key),
                    number(n, at, "margin"),
                    orDefault(n, "relative", bool(n, at, "relative"), Boolean.FALSE),
                    orDefault(n, "alpha", number(n, at, "alpha"), Guardrail.DEFAULT_ALPHA),
                    number(n, at, "tau")));
        }
        return out;
    }

    private SampleRatio sampleRatio(JsonNode s) {
        keysKnown(s, "sampleRatio", SAMPLE_RATIO_KEYS);
        return new SampleRatio(orDefault(s, "alpha", number(s, "sampleRatio", "alpha"), SampleRatio.DEFAULT_ALPHA));
    }

    // ---- typed reads: null when absent (or explicit null), a problem and null when of the wrong type

    private void keysKnown(JsonNode obj, String at, Set<String> known) {
        for (Iterator<String> it = obj.fieldNames(); it.hasNext(); ) {
            String k = it.next();
            if (!known.contains(k)) {
                problems.add(new PlanProblem(join(at, k), "unknown key" + Suggest.hint(k, known))); // binds nothing
            }
        }
    }

    private JsonNode object(JsonNode obj, String at, String key) {
        JsonNode n = obj.get(key);
        if (n == null || n.isNull()) {
            return null;
        }
        if (!n.isObject()) {
            bad(join(at, key), "must be a mapping, got " + kind(n));
            return null;
        }
        return n;
    }

    private String string(JsonNode obj, String at, String key) {
        JsonNode n = obj.get(key);
        if (n == null || n.isNull()) {
            return null;
        }
        if (!n.isTextual()) {
            bad(join(at, key), "must be a string, got " + kind(n));
            return null;
        }
        return n.textValue();
    }

    private Double number(JsonNode obj, String at, String key) {
        JsonNode n = obj.get(key);
        if (n == null || n.isNull()) {
            return null;
        }
        if (!n.isNumber()) {
            bad(join(at, key), "must be a number, got " + kind(n));
            return null;
        }
        return n.doubleValue();
    }

    private Long integer(JsonNode obj, String at, String key) {
        JsonNode n = obj.get(key);
        if (n == null || n.isNull()) {
            return null;
        }
        double d = n.isNumber() ? n.doubleValue() : Double.NaN;
        if (!(Math.abs(d) <= MAX_EXACT) || d != Math.rint(d)) {
            bad(join(at, key), "must be a whole number, got " + kind(n));
            return null;
        }
        return (long) d;
    }

    private Boolean bool(JsonNode obj, String at, String key) {
        JsonNode n = obj.get(key);
        if (n == null || n.isNull()) {
            return null;
        }
        if (!n.isBoolean()) {
            bad(join(at, key), "must be true or false, got " + kind(n));
            return null;
        }
        return n.booleanValue();
    }

    private <E extends Enum<E>> E choice(JsonNode obj, String at, String key, E[] values, Function<E, String> keyOf) {
        String s = string(obj, at, key);
        if (s == null) {
            return null;
        }
        for (E e : values) {
            if (keyOf.apply(e).equals(s)) {
                return e;
            }
        }
        List<String> names = Arrays.stream(values).map(keyOf).collect(Collectors.toList());
        bad(join(at, key), "must be one of " + String.join(", ", names) + ", got \""
                + s + "\"" + Suggest.hint(s, names));
        return null;
    }

    /** The default only when the key is absent: a key present with a bad value stays null (already reported). */
    private static <T> T orDefault(JsonNode obj, String key, T value, T fallback) {
        if (value != null) {
            return value;
        }
        JsonNode n = obj.get(key);
        return n == null || n.isNull() ? fallback : null;
    }

    private static boolean has(JsonNode obj, String key) {
        JsonNode n = obj.get(key);
        return n != null && !n.isNull();
    }

    private static Integer clampToInt(long v) {
        return (int) Math.max(Integer.MIN_VALUE, Math.min(Integer.MAX_VALUE, v));
    }

    static String join(String at, String key) {
        return at.isEmpty() ? key : at + "." + key;
    }

    /** A short description of a node for messages: its type, and its value when that is short. */
    static String kind(JsonNode n) {
        if (n.isTextual()) {
            String s = n.textValue();
            return "string \"" + (s.length() > 40 ? s.substring(0, 40) + "..." : s) + "\"";
        }
        if (n.isNumber()) {
            return "number " + n.asText();
        }
        if (n.isBoolean()) {
            return "boolean " + n.asText();
        }
        return n.getNodeType().name().toLowerCase(Locale.ROOT).replace("object", "mapping").replace("array", "list");
    }

    private static Set<String> keys(String... names) {
        return java.util.Collections.unmodifiableSet(new java.util.LinkedHashSet<>(Arrays.asList(names)));
    }
}
