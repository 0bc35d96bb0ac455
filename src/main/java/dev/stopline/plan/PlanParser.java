package dev.stopline.plan;

import com.fasterxml.jackson.core.JsonFactory;
import com.fasterxml.jackson.core.JsonLocation;
import com.fasterxml.jackson.core.JsonParser;
import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.core.StreamReadConstraints;
import com.fasterxml.jackson.core.StreamReadFeature;
import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.dataformat.yaml.YAMLFactory;
import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.List;
import java.util.Set;
import org.yaml.snakeyaml.LoaderOptions;

/**
 * Reads a stopping plan from YAML or JSON, safely, and validates it.
 *
 * <p>Safety: the document is read into a Jackson tree ({@link JsonNode}) and bound by hand
 * ({@code PlanBinder}), so no key or tag in it can make the loader build an arbitrary Java type.
 * Limits: {@value #MAX_BYTES} bytes per document, nesting depth {@value #MAX_DEPTH}, at most
 * {@value #MAX_ALIASES} YAML aliases (so an alias bomb cannot expand), duplicate keys rejected
 * (YAML would otherwise keep the last one silently), a single YAML document per file.
 *
 * <p>Every problem is reported at once: structural problems found while binding and semantic ones
 * from {@link PlanValidator}; a semantic problem on a path whose value had the wrong type is dropped,
 * so that {@code alpha: "0.05"} gives one line, not "wrong type" and then "required".
 */
public final class PlanParser {
    /** Largest accepted document, in bytes (64 KiB; a plan is a page of YAML). */
    public static final int MAX_BYTES = 64 * 1024;
    /** Deepest accepted nesting of mappings and lists (a plan needs 4). */
    public static final int MAX_DEPTH = 16;
    /** Most YAML aliases accepted in one document. */
    public static final int MAX_ALIASES = 16;

    /** How to read the bytes. */
    public enum Format {
        YAML,
        JSON,
        /** JSON if the first non-blank character is '{' or '[', else YAML. */
        AUTO
    }

    private static final StreamReadConstraints LIMITS = StreamReadConstraints.builder()
            .maxNestingDepth(MAX_DEPTH).maxStringLength(MAX_BYTES).maxNumberLength(64).build();
    private static final ObjectMapper JSON = mapper(JsonFactory.builder().streamReadConstraints(LIMITS)
            .enable(StreamReadFeature.STRICT_DUPLICATE_DETECTION).build());
    private static final ObjectMapper YAML = mapper(YAMLFactory.builder().loaderOptions(loaderOptions())
            .streamReadConstraints(LIMITS).enable(StreamReadFeature.STRICT_DUPLICATE_DETECTION).build());

    private PlanParser() {
    }

    /** Reads and validates a plan; throws {@link PlanException} listing every problem. */
    public static Plan parse(byte[] document, Format format) {
        List<PlanProblem> problems = new ArrayList<>();
        Set<String> unusable = new HashSet<>();
        Plan plan = bind(document, format, problems, unusable);
        if (plan != null) {
            mergeSemantic(problems, unusable, PlanValidator.validate(plan));
        }
        if (!problems.isEmpty()) {
            throw new PlanException(problems);
        }
        return plan;
    }

    /** Reads a YAML plan. */
    public static Plan parseYaml(String yaml) {
        return parse(yaml.getBytes(StandardCharsets.UTF_8), Format.YAML);
    }

    /** Reads a JSON plan. */
    public static Plan parseJson(String json) {
        return parse(json.getBytes(StandardCharsets.UTF_8), Format.JSON);
    }

    /** Reads a plan file (YAML, or JSON if it starts with '{'); problems do not name the file, the caller does. */
    public static Plan parse(Path file) throws IOException {
        try (InputStream in = Files.newInputStream(file)) {
            byte[] head = in.readNBytes(MAX_BYTES + 1);
            return parse(head, Format.AUTO);
        }
    }

    private static Plan bind(byte[] document, Format format, List<PlanProblem> problems, Set<String> unusable) {
        if (document.length > MAX_BYTES) {
            problems.add(new PlanProblem(PlanProblem.DOCUMENT,
                    "larger than " + MAX_BYTES + " bytes; a stopping plan is a page of YAML"));
            return null;
        }
        JsonNode root = readTree(document, format, problems);
        if (root == null) {
            return null;
        }
        PlanBinder binder = new PlanBinder();
        Plan plan = binder.plan(root);
        problems.addAll(binder.problems());
        unusable.addAll(binder.unusable());
        return plan;
    }

    private static JsonNode readTree(byte[] document, Format format, List<PlanProblem> problems) {
        boolean yaml = format == Format.YAML || format == Format.AUTO && !looksLikeJson(document);
        ObjectMapper mapper = yaml ? YAML : JSON;
        try (JsonParser p = mapper.createParser(document)) {
            JsonNode root = mapper.readTree(p);
            if (root == null || root.isMissingNode() || root.isNull()) {
                problems.add(new PlanProblem(PlanProblem.DOCUMENT, "is empty"));
                return null;
            }
            if (p.nextToken() != null) {
                problems.add(new PlanProblem(PlanProblem.DOCUMENT, (yaml ? "holds more than one YAML document"
                        : "has content after the JSON value") + where(p.currentLocation())));
                return null;
            }
            return root;
        } catch (JsonProcessingException e) {
            problems.add(new PlanProblem(PlanProblem.DOCUMENT, (yaml ? "is not valid YAML" : "is not valid JSON")
                    + where(e.getLocation()) + ": " + firstLine(e.getOriginalMessage())));
            return null;
        } catch (IOException | RuntimeException e) {
            // snakeyaml reports some limits (alias count, code points) as its own unchecked exceptions
            problems.add(new PlanProblem(PlanProblem.DOCUMENT, "could not be read: " + firstLine(e.getMessage())));
            return null;
        }
    }

    /**
     * Adds the semantic problems, except those at or inside a path whose value was present but
     * unusable: that value was bound as null, so "required" there would repeat the type problem.
     */
    private static void mergeSemantic(List<PlanProblem> structural, Set<String> unusable,
            List<PlanProblem> semantic) {
        for (PlanProblem p : semantic) {
            if (unusable.stream().noneMatch(u -> p.path().equals(u) || isUnder(p.path(), u))) {
                structural.add(p);
            }
        }
    }

    private static boolean isUnder(String child, String parent) {
        return child.length() > parent.length() && child.startsWith(parent) && (child.charAt(parent.length()) == '.' || child.charAt(parent.length()) == '[');
    }

    private static boolean looksLikeJson(byte[] d) {
        for (byte b : d) {
            if (b != ' ' && b != '\t' && b != '\n' && b != '\r' && b != (byte) 0xEF && b != (byte) 0xBB && b != (byte) 0xBF) {
                return b == '{' || b == '[';
            }
        }
        return false;
    }

    private static String where(JsonLocation loc) {
        return loc == null || loc.getLineNr() < 0 ? "" : " at line " + loc.getLineNr() + ", column " + loc.getColumnNr();
    }

    /** First line of a parser message, without a leading Java exception class name. */
    private static String firstLine(String s) {
        if (s == null) {
            return "unknown error";
        }
        int nl = s.indexOf('\n');
        return (nl < 0 ? s : s.substring(0, nl)).replaceFirst("^([a-z]+\\.)+[A-Z]\\w*(Exception|Error): ", "");
    }

    private static LoaderOptions loaderOptions() {
        LoaderOptions o = new LoaderOptions();
        o.setMaxAliasesForCollections(MAX_ALIASES);
        o.setNestingDepthLimit(MAX_DEPTH);
        o.setCodePointLimit(MAX_BYTES);
        o.setAllowRecursiveKeys(false);
        return o;
    }

    private static ObjectMapper mapper(JsonFactory factory) {
        return new ObjectMapper(factory);
    }
}
