package dev.stopline.service;

import static io.restassured.RestAssured.given;
import static org.awaitility.Awaitility.await;
import static org.hamcrest.Matchers.containsString;
import static org.hamcrest.Matchers.hasItem;
import static org.junit.jupiter.api.Assertions.assertEquals;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.monitor.LookRecord;
import dev.stopline.plan.PlanParser;
import dev.stopline.service.store.Store;
import dev.stopline.stats.groupseq.Boundaries;
import dev.stopline.stats.groupseq.LookBoundary;
import dev.stopline.testing.Counts;
import dev.stopline.testing.KafkaTestResource;
import dev.stopline.testing.Streams;
import dev.stopline.testing.TestKafka;
import dev.stopline.wire.Snapshot;
import dev.stopline.wire.SnapshotWriter;
import io.quarkus.test.common.QuarkusTestResource;
import io.quarkus.test.junit.QuarkusTest;
import io.restassured.specification.RequestSpecification;
import jakarta.inject.Inject;
import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.time.Instant;
import java.util.List;
import org.junit.jupiter.api.Test;

/** Plans through the API (validation, lock, amendment, audit) and a known stop end to end through Kafka. */
@QuarkusTest
@QuarkusTestResource(KafkaTestResource.class)
class DaemonPlanLifecycleTest {
    private static final Duration WAIT = Duration.ofSeconds(60);

    @Inject
    Store store;

    static RequestSpecification api() {
        return given().header("Authorization", "Bearer " + KafkaTestResource.API_TOKEN);
    }

    private static byte[] yaml(String s) {
        return s.getBytes(StandardCharsets.UTF_8);
    }

    @Test
    void invalidPlan_isRefusedWithEveryProblemAndItsPath() {
        String bad = Counts.plan("it-bad-plan").replace("alpha: 0.05", "alpha: 1.5").replace("looks: 5", "looks: [0.5, 0.4, 1]");
        api().contentType("application/yaml").body(yaml(bad)).when().post("/api/plans").then().statusCode(422)
                .body("problems.path", hasItem("primary.alpha"))
                .body("problems.path", hasItem("primary.looks"))
                .body("problems.rule", hasItem(containsString("got 1.5")));
    }

    @Test
    void oversizedRequest_isRefusedBeforeItIsRead() throws java.io.IOException {
        // 300 KiB announced against the 256 KiB request limit (quarkus.http.limits.max-body-size). The
        // answer must come from the Content-Length alone, before any byte of the body is sent: a client
        // still writing the body races the server's close, which made this check flaky through an HTTP
        // client library (a reset read as a failed request).
        try (java.net.Socket socket = new java.net.Socket("localhost", io.restassured.RestAssured.port)) {
            socket.setSoTimeout(10_000);
            String head = "POST /api/plans HTTP/1.1\r\nHost: localhost\r\nAuthorization: Bearer "
                    + KafkaTestResource.API_TOKEN + "\r\nContent-Type: application/yaml\r\nContent-Length: "
                    + 300 * 1024 + "\r\n\r\n";
            socket.getOutputStream().write(head.getBytes(StandardCharsets.US_ASCII));
            socket.getOutputStream().flush();
            String status = new java.io.BufferedReader(new java.io.InputStreamReader(socket.getInputStream(),
                    StandardCharsets.US_ASCII)).readLine();
            assertEquals("HTTP/1.1 413", status == null ? null : status.substring(0, Math.min(12, status.length())),
                    "status line: " + status);
        }
    }

    @Test
    void lockedPlan_refusesAChange_andTakesItAsAnAuditedAmendmentKeepingTheAlphaSpent() {
        String id = "it-plan-lock";
        String plan = Counts.plan(id);
        api().contentType("application/yaml").body(yaml(plan)).when().post("/api/plans").then().statusCode(201);
        String larger = plan.replace("maxUnitsPerArm: 10000", "maxUnitsPerArm: 12000");
        api().contentType("application/yaml").body(yaml(larger)).when().post("/api/plans").then().statusCode(200)
                .body("outcome", org.hamcrest.Matchers.equalTo("REPLACED"));

        // first look at 2,400 per arm = fraction 0.2 of 12,000: the plan locks
        TestKafka.send("stopline.counts", id, Counts.proportion(id, 1, "orders", 2400, 240, 2400, 250));
        await().atMost(WAIT).until(() -> store.plan(id).orElseThrow().locked());
        double spent = store.state(id).orElseThrow().state().cumulativeAlphaSpent();

        String again = plan.replace("maxUnitsPerArm: 10000", "maxUnitsPerArm: 15000");
        api().contentType("application/yaml").body(yaml(again)).when().post("/api/plans").then().statusCode(409)
                .body("error", containsString("locked"));
        String changedAlpha = again.replace("alpha: 0.05", "alpha: 0.10");
        api().contentType("application/yaml").body(yaml(changedAlpha)).queryParam("reason", "more power")
                .when().post("/api/experiments/" + id + "/amendments").then().statusCode(422)
                .body("problems.path", hasItem("primary.alpha"));
        api().contentType("application/yaml").body(yaml(again)).queryParam("reason", "traffic lower than forecast")
                .when().post("/api/experiments/" + id + "/amendments").then().statusCode(200)
                .body("outcome", org.hamcrest.Matchers.equalTo("AMENDED"));

        List<Store.AuditEntry> audit = store.audit(id);
        assertEquals(List.of("registered", "replaced", "locked", "amended"),
                audit.stream().map(Store.AuditEntry::action).toList());
        Store.AuditEntry amended = audit.get(3);
        assertEquals(spent, amended.alphaSpent(), 0.0, "the amendment records the alpha already spent");
        assertEquals("traffic lower than forecast", amended.detail());
        assertEquals(15000, store.plan(id).map(p -> PlanParser.parseJson(p.planJson()).primary().maxUnitsPerArm())
                .orElseThrow());
    }

    @Test
    void obrienFlemingStream_stopsAtTheLookTheCoreComputes_withTheAlertOnTheTopic() throws Exception {
        // Counts built so that z is just below the O'Brien-Fleming-type boundary at look 2 and just above it
        // at look 3 (boundaries from the core: Lan & DeMets 1983 spending; Streams builds the exact z).
        String id = "it-obf-stop";
        String plan = """
                experiment: it-obf-stop
                allocation: {control: 0.5, treatment: 0.5}
                control: control
                primary:
                  metric: order_value
                  type: mean
                  method: group-sequential
                  alpha: 0.05
                  sides: 2
                  spending: obrien-fleming
                  looks: 5
                  maxUnitsPerArm: 50000
                """;
        api().contentType("application/yaml").body(yaml(plan)).when().post("/api/plans").then().statusCode(201);
        List<LookBoundary> planned = Boundaries.compute(ExperimentMonitor.designOf(PlanParser.parseYaml(plan).primary()))
                .looks();
        List<Snapshot> snaps = Streams.mean(id, "order_value", Instant.parse("2027-03-01T00:00:00Z")).withUnits(40, 12)
                .snapshot(10_000, 1.0)
                .snapshot(20_000, planned.get(1).efficacyZ() - 1e-6)
                .snapshot(30_000, planned.get(2).efficacyZ() + 1e-6)
                .snapshots();
        for (Snapshot s : snaps) {
            TestKafka.send("stopline.counts", id, SnapshotWriter.toJson(s));
        }
        await().atMost(WAIT).until(() -> store.state(id).map(s -> s.state().primaryDecision() != null).orElse(false));
        List<LookRecord> looks = store.looks(id);
        assertEquals(List.of("continue", "continue", "efficacy"), looks.stream().map(l -> l.decision().wireName()).toList());
        assertEquals(planned.get(2).efficacyZ(), looks.get(2).efficacyZ(), 1e-9, "the core's boundary, same code");

        ObjectMapper json = new ObjectMapper();
        await().atMost(WAIT).until(() -> TestKafka.readAll("stopline.alerts", Duration.ofSeconds(1)).stream()
                .filter(r -> id.equals(r.key())).map(r -> read(json, r.value()))
                .anyMatch(e -> e.path("id").asText().equals(id + "/efficacy/order_value/3")
                        && e.path("data").path("evidence").path("look").asInt() == 3));
    }

    private static JsonNode read(ObjectMapper json, byte[] value) {
        try {
            return json.readTree(value);
        } catch (java.io.IOException e) {
            throw new IllegalStateException(e);
        }
    }
}
