package dev.stopline.deploy;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.dataformat.yaml.YAMLFactory;
import java.io.IOException;
import java.nio.file.Path;
import java.util.Set;
import java.util.TreeSet;
import java.util.regex.Matcher;
import java.util.regex.Pattern;

/** The metric names a Prometheus rule file's expressions refer to. */
final class PrometheusRules {
    /** A metric name followed by a label matcher or a range/space (PromQL functions are followed by '('). */
    private static final Pattern METRIC = Pattern.compile("\\b([a-z_][a-z0-9_]*)\\s*(?=\\{|\\[|\\)|\\s|$)");
    private static final Set<String> KEYWORDS = Set.of("by", "without", "or", "and", "unless", "on", "ignoring",
            "group_left", "group_right", "bool", "offset", "sum", "min", "max", "avg", "group", "stddev", "stdvar",
            "count", "count_values", "bottomk", "topk", "quantile");

    private PrometheusRules() {
    }

    static Set<String> metricNames(Path rulesFile) throws IOException {
        JsonNode rules = new ObjectMapper(new YAMLFactory()).readTree(rulesFile.toFile());
        Set<String> names = new TreeSet<>();
        for (JsonNode group : rules.path("groups")) {
            for (JsonNode r : group.path("rules")) {
                // label values and matchers are inside {...}: drop them before looking for names
                String expr = r.path("expr").asText().replaceAll("\\{[^}]*\\}", "{}")
                        .replaceAll("\\([a-z_, ]*\\)\\s*\\(", "((");
                Matcher m = METRIC.matcher(expr);
                while (m.find()) {
                    if (!KEYWORDS.contains(m.group(1))) {
                        names.add(m.group(1));
                    }
                }
            }
        }
        return names;
    }
}
