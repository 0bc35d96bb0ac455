package dev.stopline.service;

import static io.restassured.RestAssured.given;
import static org.awaitility.Awaitility.await;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.dataformat.yaml.YAMLMapper;
import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.monitor.LookRecord;
import dev.stopline.monitor.MonitorState;
import dev.stopline.monitor.Monitoring;
import dev.stopline.plan.PlanParser;
import dev.stopline.service.broker.DeadLetters;
import dev.stopline.service.store.Store;
import dev.stopline.testing.Counts;
import dev.stopline.testing.KafkaBrokerExtension;
import dev.stopline.testing.KafkaTestResource;
import dev.stopline.testing.Oracle;
import dev.stopline.testing.PlanMutations;
import dev.stopline.testing.TestKafka;
import dev.stopline.wire.SnapshotParser;
import io.quarkus.test.common.QuarkusTestResource;
import io.quarkus.test.junit.QuarkusTest;
import io.restassured.response.Response;
import jakarta.inject.Inject;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.TreeMap;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.TestReporter;

/**
 * Seeded hostile input through the running daemon: mutated plan documents (YAML and JSON) POSTed to
 * {@code /api/plans}, and a few hundred mutated or random snapshot records interleaved with a valid stream
 * on the counts topic. The daemon never answers 5xx, every refusal names its problems, every bad record
 * lands in the dead-letter topic with the reason the pure pipeline gives it (and, where the mutation
 * decides the reason by construction, that reason), and the valid stream is evaluated as if the bad
 * records had not been there.
 */
@QuarkusTest
@QuarkusTestResource(KafkaTestResource.class)
class DaemonFuzzTest {
    private static final String COUNTS = "stopline.counts";
    private static final Duration WAIT = Duration.ofSeconds(60);
    private static final long PLAN_SEED = 20261202L;
    private static final int PLAN_CASES = 300;
    private static final long SNAPSHOT_SEED = 20270302L;
    private static final int GOOD_SNAPSHOTS = 150;
    private static final String[] VALUES = {"-1", "0", "1", "1.5", ".nan", ".inf", "1e400", "null", "~", "[]", "{}",
            "\"\"", "yes", "'power:'", "[0.5, 0.2, 1]", "*undefined", "&a x", "!!binary AAAA", "|\n  x", "100000000000"};
    private static final String[] SHIPPED = {"checkout-redesign", "recommendations-v2", "gift-wrap-upsell"};

    @Inject
    Store store;

    // ------------------------------------------------------------------ plans

    @Test
    void mutatedPlanDocuments_areRegisteredOrRefusedWith4xxAndTheirProblems_neverA5xx(TestReporter report)
            throws Exception {
        List<String> yamlBases = new ArrayList<>();
        for (String id : SHIPPED) {
            // renamed, so that a mutation still valid registers an experiment of its own, never a shipped one
            yamlBases.add(Files.readString(Path.of("config", "plans", id + ".yaml"))
                    .replace("experiment: " + id, "experiment: fuzz-" + id));
        }
        List<String> jsonBases = new ArrayList<>();
        ObjectMapper json = new ObjectMapper();
        for (String y : yamlBases) {
            jsonBases.add(json.writerWithDefaultPrettyPrinter().writeValueAsString(new YAMLMapper().readTree(y)));
        }
        SplittableRandom rnd = new SplittableRandom(PLAN_SEED);
        Map<Integer, Integer> statuses = new TreeMap<>();
        int skipped = 0;
        for (int i = 0; i < PLAN_CASES; i++) {
            boolean asJson = rnd.nextInt(3) == 0;
            String base = (asJson ? jsonBases : yamlBases).get(rnd.nextInt(yamlBases.size()));
            byte[] doc = switch (rnd.nextInt(3)) {
                case 0 -> PlanMutations.bytes(base.getBytes(StandardCharsets.UTF_8), rnd);
                case 1 -> asJson ? jsonValue(base, rnd) : PlanMutations.yamlValue(base, rnd, VALUES);
                default -> PlanMutations.bytes(PlanMutations.bytes(base.getBytes(StandardCharsets.UTF_8), rnd), rnd);
            };
            if (namesAShippedExperiment(doc)) {
                skipped++;                    // would replace a plan the other daemon tests rely on
                continue;
            }
            String type = asJson ? "application/json" : (rnd.nextBoolean() ? "application/yaml" : "text/plain");
            Response r = given().auth().oauth2(KafkaTestResource.API_TOKEN).contentType(type).body(doc)
                    .when().post("/api/plans");
            int status = r.statusCode();
            statuses.merge(status, 1, Integer::sum);
            String shown = "case " + i + " (" + type + ") answered " + status + ": " + r.asString()
                    + "\n--- document ---\n" + new String(doc, StandardCharsets.UTF_8);
            assertTrue(status < 500, shown);
            if (status == 422) {
                JsonNode body = json.readTree(r.asByteArray());
                assertFalse(body.path("error").asText().isBlank(), shown);
                assertTrue(body.path("problems").isArray() && body.path("problems").size() > 0, shown);
                for (JsonNode p : body.path("problems")) {
                    assertFalse(p.path("rule").asText().isBlank(), shown);
                    assertFalse(p.path("path").asText().isBlank(), shown);
                }
            } else if (status == 200 || status == 201) {
                assertTrue(json.readTree(r.asByteArray()).path("experiment").asText().startsWith("fuzz-"), shown);
            } else {
                throw new AssertionError("neither registered nor refused as an invalid plan: " + shown);
            }
        }
        report.publishEntry("planFuzz", "seed " + PLAN_SEED + ": statuses " + statuses + ", " + skipped + " skipped");
        int accepted = statuses.getOrDefault(200, 0) + statuses.getOrDefault(201, 0);
        assertTrue(accepted > 0 && statuses.getOrDefault(422, 0) > PLAN_CASES / 2,
                "the mix holds both valid and invalid documents: " + statuses);
        given().when().get("/q/health/ready").then().statusCode(200);
        given().when().get("/q/health/live").then().statusCode(200);
    }

    @Test
    void emptyOversizedAndBinaryPlanDocuments_areRefusedWith4xx_andTheDaemonStaysReady() {
        String base = Counts.plan("fuzz-sizes");            // valid: only its size is wrong below
        // PlanParser.MAX_BYTES is 64 KiB (a 70 KiB plan gets 422 with the problem); quarkus.http.limits.max-body-size
        // is 256 KiB (application.properties)
        String comment = "# " + "x".repeat(1000) + "\n";
        Map<String, byte[]> docs = new TreeMap<>();
        docs.put("empty", new byte[0]);
        docs.put("only a comment", "# nothing here\n".getBytes(StandardCharsets.UTF_8));
        docs.put("70 KiB", (base + comment.repeat(70)).getBytes(StandardCharsets.UTF_8));
        // A body over the 256 KiB limit is refused with 413 before it is read, and the connection closed while
        // an HTTP client may still be writing (a broken pipe here, once in a few runs): that case is
        // DaemonPlanLifecycleTest.oversizedRequest_isRefusedBeforeItIsRead, on a raw socket.
        docs.put("binary", new byte[] {0, (byte) 0xff, (byte) 0xfe, 1, 2, 3, 0x7f, (byte) 0x80});
        docs.put("deep nesting", ("a: " + "[".repeat(5000)).getBytes(StandardCharsets.UTF_8));
        for (Map.Entry<String, byte[]> d : docs.entrySet()) {
            for (String type : List.of("application/yaml", "application/json")) {
                Response r = given().auth().oauth2(KafkaTestResource.API_TOKEN).contentType(type).body(d.getValue())
                        .when().post("/api/plans");
                String shown = d.getKey() + " as " + type + " answered " + r.statusCode() + ": " + r.asString();
                assertEquals(422, r.statusCode(), shown);
                assertTrue(r.jsonPath().getList("problems").size() > 0, shown);
            }
        }
        given().when().get("/q/health/ready").then().statusCode(200);
    }

    private static boolean namesAShippedExperiment(byte[] doc) {
        String s = new String(doc, StandardCharsets.UTF_8);
        for (String id : SHIPPED) {
            if (s.replace("fuzz-" + id, "").contains(id)) {
                return true;
            }
        }
        return false;
    }

    /** Replaces the value of one {@code "key" : value} line of pretty-printed JSON with another JSON value. */
    private static byte[] jsonValue(String doc, SplittableRandom rnd) {
        String[] json = {"-1", "0", "1.5", "1e400", "null", "true", "\"\"", "[]", "{}", "\"power:\"", "[0.5, 0.2, 1]",
                "\"obrien-fleming\"", "100000000000", "\"x\""};
        String[] lines = doc.split("\n", -1);
        int i = rnd.nextInt(lines.length);
        int colon = lines[i].indexOf("\" : ");
        if (colon >= 0) {
            boolean comma = lines[i].endsWith(",");
            lines[i] = lines[i].substring(0, colon + 4) + json[rnd.nextInt(json.length)] + (comma ? "," : "");
        }
        return String.join("\n", lines).getBytes(StandardCharsets.UTF_8);
    }

    // ------------------------------------------------------------------ snapshots

    /** A record for the counts topic, and the dead-letter reason its mutation decides (null: none, or not known). */
    private record Sent(String key, byte[] value, String constructedReason) {
    }

    @Test
    void hundredsOfBadRecordsAmongGoodOnes_eachDeadLetteredWithItsReason_andTheGoodStreamEvaluatedAsAlone(
            TestReporter report) {
        String id = "it-fuzz-mix";
        String plan = Counts.plan(id).replace("looks: 5", "looks: 10");
        given().auth().oauth2(KafkaTestResource.API_TOKEN).contentType("application/yaml")
                .body(plan.getBytes(StandardCharsets.UTF_8)).when().post("/api/plans").then().statusCode(201);
        SplittableRandom rnd = new SplittableRandom(SNAPSHOT_SEED);
        List<String> good = new ArrayList<>();
        List<Sent> records = new ArrayList<>();
        for (int k = 1; k <= GOOD_SNAPSHOTS; k++) {
            // 60 more units per arm each, 10% vs 10.5% orders: 9,000 per arm at the end (information 0.9)
            String g = Counts.proportion(id, k, "orders", 60L * k, 6L * k, 60L * k, 6L * k + (6L * k) / 20);
            good.add(g);
            records.add(new Sent(id, g.getBytes(StandardCharsets.UTF_8), null));
            for (int m = rnd.nextInt(5); m > 0; m--) {
                records.add(mutation(id, k, good, rnd));
            }
        }
        send(records);

        await().atMost(WAIT).until(() -> store.state(id).map(s -> s.state().lastSequence() == GOOD_SNAPSHOTS)
                .orElse(false));
        assertEquals(GOOD_SNAPSHOTS, store.state(id).orElseThrow().state().snapshots(),
                "exactly the good snapshots were evaluated");
        assertEquals(Oracle.of(plan, id, good).primaryLookSequences(),
                store.looks(id).stream().filter(l -> LookRecord.PRIMARY.equals(l.role())).map(LookRecord::sequence)
                        .toList(), "the looks of the good stream alone");

        Prediction predicted = predict(plan, id, records);
        assertEquals(good, predicted.evaluated(), "test construction: the pipeline accepts the good records only");
        List<String> constructedMismatch = new ArrayList<>();
        int constructed = 0;
        for (int i = 0; i < records.size(); i++) {
            Sent s = records.get(i);
            if (s.constructedReason() != null) {
                constructed++;
                String p = predicted.reasons().get(i);
                if (!s.constructedReason().equals(p)) {
                    constructedMismatch.add(s.constructedReason() + " expected, pipeline says " + p + ": "
                            + new String(s.value(), StandardCharsets.UTF_8));
                }
            }
        }
        assertEquals(List.of(), constructedMismatch, "the pure pipeline gives each constructed mutation its reason");
        List<String> expectedDead = new ArrayList<>();
        predicted.reasons().forEach((i, reason) -> expectedDead.add(reason + " "
                + new String(records.get(i).value(), StandardCharsets.UTF_8)));
        expectedDead.sort(null);
        await().atMost(WAIT).untilAsserted(() -> {
            List<String> dead = new ArrayList<>();
            int withoutDetail = 0;
            for (ConsumerRecord<String, byte[]> r : TestKafka.readAll("stopline.counts.dlq", Duration.ofSeconds(1))) {
                if (r.key() != null && r.key().startsWith(id)) {
                    dead.add(TestKafka.header(r, DeadLetters.REASON) + " " + new String(r.value(), StandardCharsets.UTF_8));
                    if (TestKafka.header(r, DeadLetters.DETAIL) == null) {
                        withoutDetail++;
                    }
                }
            }
            dead.sort(null);
            assertEquals(expectedDead, dead, "each bad record dead-lettered once, with the pipeline's reason");
            assertEquals(0, withoutDetail, "every dead letter says what was wrong");
        });
        Map<String, Integer> byReason = new TreeMap<>();
        predicted.reasons().values().forEach(r -> byReason.merge(r, 1, Integer::sum));
        report.publishEntry("snapshotFuzz", "seed " + SNAPSHOT_SEED + ": " + records.size() + " records, "
                + GOOD_SNAPSHOTS + " good, " + constructed + " with a constructed reason, dead letters " + byReason);
        assertTrue(expectedDead.size() > 150, "a few hundred records, many of them bad: " + byReason);
        given().when().get("/q/health/ready").then().statusCode(200);
    }

    /**
     * One seeded bad or repeated record next to good snapshot k. Mutations that keep sequence k (already
     * accepted) are either unparsable or duplicates; those that claim k + 1 break an order or shape rule, so
     * none can pass for the next good snapshot.
     */
    private static Sent mutation(String id, int k, List<String> good, SplittableRandom rnd) {
        String g = good.get(k - 1);
        String next = Counts.proportion(id, k + 1, "orders", 60L * (k + 1), 6L * (k + 1), 60L * (k + 1), 6L * (k + 1));
        int arms = g.indexOf("\"arms\"");
        return switch (rnd.nextInt(14)) {
            // a strict prefix of a JSON object is never valid JSON
            case 0 -> sent(id, g.substring(0, arms + rnd.nextInt(g.length() - arms - 1)), "malformed-json");
            case 1 -> sent(id, g.replaceFirst("\"units\":\\d+", "\"units\":-3"), "invalid-value");
            case 2 -> sent(id, g.replaceFirst("\"sum\":\\d+", "\"sum\":1e300"), "invalid-value");
            case 3 -> sent(id, g, null);                                              // a redelivery: duplicate
            case 4 -> sent(id, g.replace("\"control\"", "\"kontrol\""), null);        // same sequence: duplicate
            case 5 -> new Sent(id, randomBytes(rnd), null);                         // garbage: reason not decided here
            case 6 -> sent(id, g.replace("\"experiment\":\"" + id + "\"", "\"experiment\":\"" + id + "-other\""),
                    "key-mismatch");
            case 7 -> k >= 3 ? sent(id, good.get(k - 3).replace("\"sequence\":" + (k - 2) + ",",
                    "\"sequence\":" + (k - 2) + " ,"), "out-of-order") : sent(id, g, null);
            case 8 -> sent(id, Counts.proportion(id, k + 1, "orders", 60L * k - 1, 6L * k, 60L * k, 6L * k),
                    "decreasing-count");
            case 9 -> new Sent(id + "-nobody", Counts.proportion(id + "-nobody", 1, "orders", 10, 1, 10, 1)
                    .getBytes(StandardCharsets.UTF_8), "unknown-experiment");
            case 10 -> sent(id, next.replace("\"sequence\":" + (k + 1) + ",", "\"sequence\":\"" + (k + 1) + "\","),
                    null);                                                            // a string sequence
            case 11 -> sent(id, next.replace("\"treatment\"", "\"variant-b\""), "unknown-arm");
            case 12 -> sent(id, next.replace("\"orders\"", "\"refunds\""), null);     // other metric name
            default -> sent(id, flip(g, rnd), null);                                  // one character changed
        };
    }

    private static Sent sent(String key, String value, String reason) {
        return new Sent(key, value.getBytes(StandardCharsets.UTF_8), reason);
    }

    private static byte[] randomBytes(SplittableRandom rnd) {
        byte[] b = new byte[1 + rnd.nextInt(200)];
        for (int i = 0; i < b.length; i++) {
            b[i] = (byte) rnd.nextInt(256);
        }
        if (b[0] == '{') {
            b[0] = '?';
        }
        return b;
    }

    /** One character of the arms part (after sequence and experiment) replaced by a random printable one. */
    private static String flip(String s, SplittableRandom rnd) {
        int arms = s.indexOf("\"arms\"");
        int at = arms + rnd.nextInt(s.length() - arms);
        return s.substring(0, at) + (char) (33 + rnd.nextInt(94)) + s.substring(at + 1);
    }

    /**
     * What the pure pipeline (the daemon's own {@link Monitoring}, run here over the records in order) does
     * with each record: the texts it evaluates, and the reason code of each record it rejects, by index.
     */
    private record Prediction(List<String> evaluated, Map<Integer, String> reasons) {
    }

    private static Prediction predict(String plan, String id, List<Sent> records) {
        ExperimentMonitor monitor = ExperimentMonitor.of(PlanParser.parseYaml(plan), 1);
        Map<String, MonitorState> states = new HashMap<>();
        Monitoring pipeline = new Monitoring(SnapshotParser.withDefaults(), e -> e.equals(id) ? monitor : null);
        List<String> evaluated = new ArrayList<>();
        Map<Integer, String> reasons = new TreeMap<>();
        for (int i = 0; i < records.size(); i++) {
            Sent s = records.get(i);
            Monitoring.Step step = pipeline.process(s.value(), s.key(), states::get);
            if (step instanceof Monitoring.Rejected r) {
                reasons.put(i, r.rejection().reason().code());
            } else if (step instanceof Monitoring.Evaluated e) {
                states.put(e.snapshot().experiment(), e.evaluation().state());
                evaluated.add(new String(s.value(), StandardCharsets.UTF_8));
            }
        }
        return new Prediction(evaluated, reasons);
    }

    private static void send(List<Sent> records) {
        try (KafkaProducer<String, byte[]> producer = TestKafka.bytesProducer(KafkaBrokerExtension.bootstrapServers())) {
            List<java.util.concurrent.Future<?>> acks = new ArrayList<>();
            for (Sent s : records) {
                // the shared topic has one partition: the daemon reads the records in the order they are sent
                acks.add(producer.send(new ProducerRecord<>(COUNTS, s.key(), s.value())));
            }
            for (java.util.concurrent.Future<?> a : acks) {
                a.get();
            }
        } catch (Exception e) {
            throw new IllegalStateException("send to " + COUNTS + " failed", e);
        }
    }
}
