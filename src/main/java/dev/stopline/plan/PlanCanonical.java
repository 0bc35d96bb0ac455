package dev.stopline.plan;

import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.JsonNodeFactory;
import com.fasterxml.jackson.databind.node.ObjectNode;
import com.fasterxml.jackson.dataformat.yaml.YAMLFactory;
import com.fasterxml.jackson.dataformat.yaml.YAMLGenerator;
import java.nio.charset.StandardCharsets;
import java.security.MessageDigest;
import java.security.NoSuchAlgorithmException;
import java.util.HexFormat;
import java.util.List;

/**
 * The canonical form of a valid plan, so that a locked plan can be compared with an amendment.
 *
 * <p>Canonical JSON: compact, keys in a fixed order (the order of the plan reference), absent
 * optional keys omitted, every default written out (so "alpha omitted" and "alpha: 0.01" give the
 * same text), numbers as the shortest decimal that round-trips a double (Jackson's
 * {@code Double.toString}), whole-number fields as integers, spending specs in lower case, looks written as the integer K when they
 * are exactly k/K and as a list otherwise, a guardrail's tau written as its effective value. Two plans
 * with the same meaning therefore have the same canonical JSON and the same {@link #sha256 hash};
 * comments, key order and quoting style in the source file do not matter. Description and owner are
 * part of the content, so editing them is an amendment too.
 */
public final class PlanCanonical {
    private static final JsonNodeFactory NODES = JsonNodeFactory.instance;
    private static final ObjectMapper JSON = new ObjectMapper();
    private static final ObjectMapper YAML = new ObjectMapper(YAMLFactory.builder()
            .disable(YAMLGenerator.Feature.WRITE_DOC_START_MARKER)
            .enable(YAMLGenerator.Feature.MINIMIZE_QUOTES)
            .enable(YAMLGenerator.Feature.ALWAYS_QUOTE_NUMBERS_AS_STRINGS)
            .build());

    private PlanCanonical() {
    }

    /** Canonical compact JSON of a valid plan; throws {@link PlanException} if it is not valid. */
    public static String toJson(Plan plan) {
        return write(JSON, tree(PlanValidator.requireValid(plan)));
    }

    /** The canonical content as block YAML (same content as {@link #toJson}; YAML layout is not hashed). */
    public static String toYaml(Plan plan) {
        return write(YAML, tree(PlanValidator.requireValid(plan)));
    }

    /** SHA-256 of the UTF-8 bytes of {@link #toJson}, as 64 lower-case hex digits. */
    public static String sha256(Plan plan) {
        try {
            byte[] digest = MessageDigest.getInstance("SHA-256").digest(toJson(plan).getBytes(StandardCharsets.UTF_8));
            return HexFormat.of().formatHex(digest);
        } catch (NoSuchAlgorithmException e) {
            throw new IllegalStateException("every Java platform provides SHA-256", e);
        }
    }

    static ObjectNode tree(Plan p) {
        ObjectNode root = NODES.objectNode();
        root.put("experiment", p.experiment());
        ObjectNode allocation = root.putObject("allocation");
        p.allocation().forEach(allocation::put);
        root.put("control", p.control());
        root.set("primary", primary(p.primary()));
        if (!p.guardrails().isEmpty()) {
            ArrayNode g = root.putArray("guardrails");
            p.guardrails().forEach(x -> g.add(guardrail(x)));
        }
        root.putObject("sampleRatio").put("alpha", p.sampleRatio().alpha());
        putIf(root, "description", p.description());
        putIf(root, "owner", p.owner());
        return root;
    }

    private static ObjectNode primary(Primary p) {
        ObjectNode n = NODES.objectNode();
        n.put("metric", p.metric());
        n.put("type", p.type().key());
        n.put("method", p.method().key());
        n.put("alpha", p.alpha());
        n.put("sides", p.sides());
        putIf(n, "spending", spending(p.spending()));
        if (p.boundary() != null) {
            n.put("boundary", p.boundary().key());
        }
        if (p.looks() != null) {
            looks(n, p.looks());
        }
        if (p.maxUnitsPerArm() != null) {
            n.put("maxUnitsPerArm", p.maxUnitsPerArm());
        }
        putIf(n, "power", p.power());
        putIf(n, "minimumEffect", p.minimumEffect());
        putIf(n, "baselineRate", p.baselineRate());
        putIf(n, "baselineMean", p.baselineMean());
        putIf(n, "sd", p.sd());
        if (p.futility() != null) {
            n.putObject("futility").put("spending", spending(p.futility().spending()))
                    .put("beta", p.futility().beta()).put("binding", p.futility().binding());
        }
        if (p.sprt() != null) {
            n.putObject("sprt").put("minimumEffect", p.sprt().minimumEffect()).put("beta", p.sprt().beta());
        }
        if (p.mixtureSprt() != null) {
            n.putObject("mixtureSprt").put("tau", p.mixtureSprt().tau());
        }
        return n;
    }

    private static void looks(ObjectNode n, Looks looks) {
        List<Double> t = looks.fractions();
        if (t.equals(Looks.equallySpaced(t.size()).fractions())) {
            n.put("looks", t.size());
        } else {
            ArrayNode a = n.putArray("looks");
            t.forEach(a::add);
        }
    }

    private static ObjectNode guardrail(Guardrail g) {
        ObjectNode n = NODES.objectNode();
        n.put("metric", g.metric());
        n.put("type", g.type().key());
        n.put("harmful", g.harmful().key());
        n.put("margin", g.margin());
        n.put("relative", g.relative());
        n.put("alpha", g.alpha());
        n.put("tau", g.mixingSd());
        return n;
    }

    /** Spending specs are read ignoring case and surrounding blanks, so they are written that way. */
    private static String spending(String spec) {
        return spec == null ? null : spec.strip().toLowerCase(java.util.Locale.ROOT);
    }

    private static void putIf(ObjectNode n, String key, String value) {
        if (value != null) {
            n.put(key, value);
        }
    }

    private static void putIf(ObjectNode n, String key, Double value) {
        if (value != null) {
            n.put(key, value);
        }
    }

    private static String write(ObjectMapper mapper, ObjectNode tree) {
        try {
            return mapper.writeValueAsString(tree);
        } catch (JsonProcessingException e) {
            throw new IllegalStateException("a tree of strings and numbers always serializes", e);
        }
    }
}
