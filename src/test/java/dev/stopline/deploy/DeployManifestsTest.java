package dev.stopline.deploy;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.MissingNode;
import com.fasterxml.jackson.dataformat.yaml.YAMLFactory;
import dev.stopline.plan.Plan;
import dev.stopline.plan.PlanParser;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.HashSet;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Set;
import java.util.TreeSet;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import java.util.stream.Stream;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/**
 * The deployment files of {@code deploy/} parse, and agree with the application: probes on the health
 * endpoints Quarkus serves, ports that match, secret keys and volumes that exist, plans that validate, and
 * every environment variable the manifests and the systemd environment file set is one the application
 * reads (MicroProfile Config maps {@code stopline.db.url} to {@code STOPLINE_DB_URL}).
 */
class DeployManifestsTest {
    private static final Path DEPLOY = Path.of("deploy");
    private static final ObjectMapper YAML = new ObjectMapper(new YAMLFactory());
    /** The variables the brief of issue 5 names for the Deployment. */
    private static final Set<String> REQUIRED_ENV = Set.of("KAFKA_BOOTSTRAP_SERVERS", "STOPLINE_DB_URL",
            "STOPLINE_DB_USER", "STOPLINE_DB_PASSWORD", "STOPLINE_API_TOKEN", "STOPLINE_WEBHOOKS_URLS",
            "STOPLINE_WEBHOOKS_SECRET");
    /** Read by the JVM itself, not by the application's configuration. */
    private static final Set<String> JVM_ENV = Set.of("JAVA_TOOL_OPTIONS");

    private static Map<String, JsonNode> byKind;

    @BeforeAll
    static void readKubernetesManifests() throws IOException {
        byKind = new HashMap<>();
        try (Stream<Path> files = Files.list(DEPLOY.resolve("kubernetes"))) {
            for (Path f : files.filter(p -> p.toString().endsWith(".yaml")).sorted().toList()) {
                for (JsonNode doc : YAML.readValues(YAML.createParser(f.toFile()), JsonNode.class).readAll()) {
                    String kind = doc.path("kind").asText();
                    assertFalse(kind.isEmpty(), f + ": every document has a kind");
                    assertFalse(doc.path("apiVersion").asText().isEmpty(), f + ": apiVersion");
                    if (!kind.equals("Kustomization")) {
                        assertFalse(doc.path("metadata").path("name").asText().isEmpty(), f + ": metadata.name");
                    }
                    assertEquals(null, byKind.put(kind, doc), "one " + kind + " in deploy/kubernetes");
                }
            }
        }
    }

    @Test
    void deployment_probesTheQuarkusHealthEndpointsOnTheContainerPort() {
        JsonNode c = container();
        assertEquals("http", c.path("ports").get(0).path("name").asText());
        assertEquals(8080, c.path("ports").get(0).path("containerPort").asInt());
        assertEquals("/q/health/ready", c.path("readinessProbe").path("httpGet").path("path").asText());
        assertEquals("/q/health/live", c.path("livenessProbe").path("httpGet").path("path").asText());
        assertEquals("/q/health/started", c.path("startupProbe").path("httpGet").path("path").asText());
        for (String probe : List.of("readinessProbe", "livenessProbe", "startupProbe")) {
            assertEquals("http", c.path(probe).path("httpGet").path("port").asText(), probe + " port");
        }
        List<String> args = strings(c.path("args"));
        assertEquals("serve", args.get(0), "the daemon subcommand");
        assertEquals("8080", args.get(args.indexOf("--port") + 1), "--port matches the container port");
    }

    @Test
    void deployment_setsTheNamedVariables_andEveryVariableIsOneTheApplicationReads() throws IOException {
        Set<String> env = new TreeSet<>();
        for (JsonNode e : container().path("env")) {
            env.add(e.path("name").asText());
        }
        assertTrue(env.containsAll(REQUIRED_ENV), () -> "missing: " + difference(REQUIRED_ENV, env));
        Set<String> known = environmentNamesOfConfigKeys();
        for (String name : env) {
            assertTrue(known.contains(name) || JVM_ENV.contains(name),
                    () -> name + " is not the environment form of any config key the application reads");
        }
    }

    @Test
    void deployment_secretReferencesNameKeysOfTheSecret() {
        JsonNode secret = byKind.get("Secret");
        int refs = 0;
        for (JsonNode e : container().path("env")) {
            JsonNode ref = e.path("valueFrom").path("secretKeyRef");
            if (!ref.isMissingNode()) {
                refs++;
                assertEquals(secret.path("metadata").path("name").asText(), ref.path("name").asText(), e.toString());
                assertTrue(secret.path("stringData").has(ref.path("key").asText()), () -> "no key in the Secret: " + e);
            }
        }
        assertEquals(3, refs, "API token, webhook secret and database password come from the Secret");
        assertFalse(container().path("env").toString().contains("whsec_"), "no secret value inline");
    }

    @Test
    void deployment_mountsThePlansConfigMapAtThePlansDir_andEveryPlanInItValidates() {
        JsonNode c = container();
        List<String> args = strings(c.path("args"));
        String plansDir = args.get(args.indexOf("--plans-dir") + 1);
        String volume = null;
        for (JsonNode m : c.path("volumeMounts")) {
            if (m.path("mountPath").asText().equals(plansDir)) {
                volume = m.path("name").asText();
            }
        }
        assertTrue(volume != null, "a volume is mounted at --plans-dir " + plansDir);
        JsonNode cm = byKind.get("ConfigMap");
        JsonNode source = MissingNode.getInstance();
        for (JsonNode v : byKind.get("Deployment").path("spec").path("template").path("spec").path("volumes")) {
            if (v.path("name").asText().equals(volume)) {
                source = v.path("configMap");
            }
        }
        assertEquals(cm.path("metadata").path("name").asText(), source.path("name").asText());
        assertTrue(cm.path("data").size() >= 1);
        cm.path("data").fields().forEachRemaining(e -> {
            assertTrue(e.getKey().endsWith(".yaml"), e.getKey());
            Plan plan = PlanParser.parseYaml(e.getValue().asText()); // throws, listing every problem, if invalid
            assertEquals(e.getKey(), plan.experiment() + ".yaml", "file named after its experiment");
        });
    }

    @Test
    void service_targetsTheContainerPort_andSelectsThePods() {
        JsonNode svc = byKind.get("Service");
        assertEquals("http", svc.path("spec").path("ports").get(0).path("targetPort").asText());
        JsonNode podLabels = byKind.get("Deployment").path("spec").path("template").path("metadata").path("labels");
        svc.path("spec").path("selector").fields().forEachRemaining(e ->
                assertEquals(e.getValue().asText(), podLabels.path(e.getKey()).asText(), "selector " + e.getKey()));
        JsonNode matchLabels = byKind.get("Deployment").path("spec").path("selector").path("matchLabels");
        matchLabels.fields().forEachRemaining(e ->
                assertEquals(e.getValue().asText(), podLabels.path(e.getKey()).asText(), "matchLabels " + e.getKey()));
    }

    @Test
    void kustomization_listsEveryManifest() throws IOException {
        List<String> listed = strings(byKind.get("Kustomization").path("resources"));
        try (Stream<Path> files = Files.list(DEPLOY.resolve("kubernetes"))) {
            List<String> present = files.map(p -> p.getFileName().toString())
                    .filter(n -> n.endsWith(".yaml") && !n.equals("kustomization.yaml")).sorted().toList();
            assertEquals(present, listed.stream().sorted().toList());
        }
    }

    @Test
    void prometheusRules_eachHaveAnExpressionSeverityAndSummary_andNameStoplineMetrics() throws IOException {
        JsonNode rules = YAML.readTree(DEPLOY.resolve("prometheus/stopline-rules.yaml").toFile());
        Set<String> alerts = new HashSet<>();
        for (JsonNode group : rules.path("groups")) {
            assertFalse(group.path("name").asText().isEmpty());
            for (JsonNode r : group.path("rules")) {
                String name = r.path("alert").asText();
                assertTrue(alerts.add(name), "unique alert name " + name);
                assertFalse(r.path("expr").asText().isBlank(), name);
                assertTrue(Set.of("critical", "warning", "info").contains(r.path("labels").path("severity").asText()),
                        name + " severity");
                assertFalse(r.path("annotations").path("summary").asText().isBlank(), name + " summary");
                if (r.has("for")) {
                    // Prometheus durations such as 2m, 15m: check the same form java.time accepts
                    Duration.parse("PT" + r.path("for").asText().toUpperCase(Locale.ROOT));
                }
                assertEquals(count(r.path("expr").asText(), '('), count(r.path("expr").asText(), ')'), name + " parens");
            }
        }
        Set<String> metrics = PrometheusRules.metricNames(DEPLOY.resolve("prometheus/stopline-rules.yaml"));
        for (String m : List.of("up", "stopline_dead_letters_total", "stopline_alerts_total",
                "stopline_evaluation_seconds", "kafka_consumer_fetch_manager_records_lag_max")) {
            assertTrue(metrics.contains(m), () -> m + " not used; used: " + metrics);
        }
        for (String m : metrics) {
            assertTrue(m.equals("up") || m.startsWith("stopline_") || m.startsWith("kafka_consumer_"),
                    () -> "not a metric name (the extractor misread the expression?): " + m);
        }
    }

    @Test
    void systemdUnit_runsServeFromTheJarWithAnEnvironmentFileAndA10SecondStop() throws IOException {
        List<String> lines = Files.readAllLines(DEPLOY.resolve("systemd/stopline.service"));
        Map<String, String> service = section(lines, "Service");
        assertTrue(service.get("ExecStart").matches("/usr/bin/java .*-jar \\S+/quarkus-run\\.jar serve( .*)?"),
                service.get("ExecStart"));
        assertEquals("/etc/stopline/stopline.env", service.get("EnvironmentFile"));
        assertEquals("10", service.get("TimeoutStopSec"));
        assertEquals("SIGTERM", service.get("KillSignal"));
        assertEquals("multi-user.target", section(lines, "Install").get("WantedBy"));

        Set<String> known = environmentNamesOfConfigKeys();
        Pattern assignment = Pattern.compile("^#?([A-Z][A-Z0-9_]*)=");
        int names = 0;
        for (String line : Files.readAllLines(DEPLOY.resolve("systemd/stopline.env.example"))) {
            Matcher m = assignment.matcher(line);
            if (m.find()) {
                names++;
                assertTrue(known.contains(m.group(1)), () -> m.group(1) + " is not read by the application");
            }
        }
        assertTrue(names >= REQUIRED_ENV.size(), "the example names every variable: " + names);
    }

    // ------------------------------------------------------------------ helpers

    private static JsonNode container() {
        JsonNode containers = byKind.get("Deployment").path("spec").path("template").path("spec").path("containers");
        assertEquals(1, containers.size());
        return containers.get(0);
    }

    /**
     * The environment-variable form of every config key the application reads: the names of its
     * {@code @ConfigProperty} injections and the keys of {@code application.properties}, each with every
     * character other than a letter or digit replaced by '_' and upper-cased (MicroProfile Config 3.1,
     * "Default ConfigSources", environment variables mapping rules).
     */
    static Set<String> environmentNamesOfConfigKeys() throws IOException {
        Set<String> keys = new TreeSet<>();
        Pattern injected = Pattern.compile("@ConfigProperty\\(name\\s*=\\s*\"([^\"]+)\"");
        try (Stream<Path> sources = Files.walk(Path.of("src/main/java"))) {
            for (Path f : sources.filter(p -> p.toString().endsWith(".java")).toList()) {
                Matcher m = injected.matcher(Files.readString(f));
                while (m.find()) {
                    keys.add(m.group(1));
                }
            }
        }
        for (String line : Files.readAllLines(Path.of("src/main/resources/application.properties"))) {
            int eq = line.indexOf('=');
            if (!line.startsWith("#") && eq > 0 && !line.startsWith("%")) {
                keys.add(line.substring(0, eq).strip());
            }
        }
        keys.add("kafka.bootstrap.servers"); // read by the Kafka connector (and by serve) without a line of ours
        Set<String> env = new TreeSet<>();
        for (String k : keys) {
            env.add(k.replaceAll("[^A-Za-z0-9]", "_").toUpperCase(Locale.ROOT));
        }
        return env;
    }

    private static Map<String, String> section(List<String> lines, String name) {
        Map<String, String> out = new HashMap<>();
        boolean in = false;
        for (String l : lines) {
            String t = l.strip();
            if (t.startsWith("[")) {
                in = t.equals("[" + name + "]");
            } else if (in && !t.startsWith("#") && t.contains("=")) {
                out.put(t.substring(0, t.indexOf('=')), t.substring(t.indexOf('=') + 1));
            }
        }
        return out;
    }

    private static List<String> strings(JsonNode array) {
        List<String> out = new ArrayList<>();
        array.forEach(n -> out.add(n.asText()));
        return out;
    }

    private static Set<String> difference(Set<String> a, Set<String> b) {
        Set<String> d = new TreeSet<>(a);
        d.removeAll(b);
        return d;
    }

    private static long count(String s, char c) {
        return s.chars().filter(x -> x == c).count();
    }
}
