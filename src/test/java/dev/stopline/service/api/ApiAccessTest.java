package dev.stopline.service.api;

import static io.restassured.RestAssured.given;
import static org.junit.jupiter.api.Assertions.assertEquals;

import dev.stopline.service.ingest.CountsIngest;
import dev.stopline.service.store.Store;
import dev.stopline.testing.Counts;
import dev.stopline.testing.KafkaTestResource;
import io.quarkus.test.common.QuarkusTestResource;
import io.quarkus.test.junit.QuarkusTest;
import io.restassured.response.Response;
import jakarta.inject.Inject;
import java.nio.charset.StandardCharsets;
import java.util.List;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.junit.jupiter.api.Test;

/**
 * Access control through the running daemon's HTTP stack: the POST calls need the bearer token, a
 * refusal says nothing but "unauthorized", reads and probes stay open, and the audit trail names the
 * token rather than a header anyone can set. (protect-reads is decided by the same filter code and
 * tested in {@link ApiTokensTest} without a second application start.)
 */
@QuarkusTest
@QuarkusTestResource(KafkaTestResource.class)
class ApiAccessTest {
    private static final String UNAUTHORIZED = "{\"error\":\"unauthorized\"}";

    @Inject
    Store store;
    @Inject
    CountsIngest ingest;

    private static byte[] plan(String id) {
        return Counts.plan(id).getBytes(StandardCharsets.UTF_8);
    }

    private static void assertRefused(Response r, String what) {
        assertEquals(401, r.statusCode(), what + ": " + r.asString());
        assertEquals(UNAUTHORIZED, r.asString(), what + ": no detail beyond 'unauthorized'");
        assertEquals("Bearer", r.header("WWW-Authenticate"), what);
    }

    @Test
    void postPlan_withoutToken_orWithAWrongOne_is401AndStoresNothing() {
        String id = "access-refused";
        assertRefused(given().contentType("application/yaml").body(plan(id)).post("/api/plans"), "no token");
        assertRefused(given().auth().oauth2("wrong-" + KafkaTestResource.API_TOKEN).contentType("application/yaml")
                .body(plan(id)).post("/api/plans"), "wrong token");
        assertRefused(given().header("Authorization", "Basic " + KafkaTestResource.API_TOKEN)
                .contentType("application/yaml").body(plan(id)).post("/api/plans"), "wrong scheme");
        assertEquals(true, store.plan(id).isEmpty(), "a refused call has no effect");
    }

    @Test
    void postPlan_withTheToken_isCreated_andTheAuditActorIsTheTokenNameNotTheHeader() {
        String id = "access-granted";
        given().auth().oauth2(KafkaTestResource.API_TOKEN).header("X-Stopline-Actor", "mallory")
                .contentType("application/yaml").body(plan(id)).post("/api/plans").then().statusCode(201);
        List<Store.AuditEntry> audit = store.audit(id);
        assertEquals(1, audit.size());
        assertEquals("api", audit.get(0).actor(), "stopline.api.token-name defaults to api");
    }

    @Test
    void amendmentsAndAcknowledgements_needTheTokenToo_andTheAcknowledgerIsTheTokenName() {
        String id = "access-other-posts";
        given().auth().oauth2(KafkaTestResource.API_TOKEN).contentType("application/yaml").body(plan(id))
                .post("/api/plans").then().statusCode(201);
        assertRefused(given().contentType("application/yaml").body(plan(id))
                .post("/api/experiments/" + id + "/amendments?reason=test"), "amendment without token");
        // 1,100 vs 900 units: chi-square 20 on 1 df, p = 7.7e-6 < 0.001 (Commons Math ChiSquareTest, see
        // SampleRatioCheckTest): one sample-ratio alert, through the consumer's own ingest path
        ingest.accept(new ConsumerRecord<>("stopline.counts", 0, 0L, id,
                Counts.proportion(id, 1, "orders", 1100, 110, 900, 90).getBytes(StandardCharsets.UTF_8)));
        String alertId = id + "/sample-ratio/-/1";
        assertEquals(true, store.alert(alertId).isPresent(), "the alert exists");
        assertRefused(given().post("/api/alerts/" + alertId + "/acknowledge"), "acknowledgement without token");
        assertEquals(null, store.alert(alertId).orElseThrow().acknowledgedAt(), "a refused call has no effect");
        given().auth().oauth2(KafkaTestResource.API_TOKEN).header("X-Stopline-Actor", "mallory")
                .post("/api/alerts/" + alertId + "/acknowledge").then().statusCode(200);
        assertEquals("api", store.alert(alertId).orElseThrow().acknowledgedBy());
        // with the token an unknown alert reaches the resource, which answers for itself
        given().auth().oauth2(KafkaTestResource.API_TOKEN).post("/api/alerts/no-such-alert/acknowledge").then()
                .statusCode(404);
    }

    @Test
    void anInvalidPlanWithTheToken_is422WithEveryProblemListed_notA500() {
        String yaml = Counts.plan("access-invalid").replace("alpha: 0.05", "alpha: 1.5");
        Response r = given().auth().oauth2(KafkaTestResource.API_TOKEN).contentType("application/yaml")
                .body(yaml.getBytes(StandardCharsets.UTF_8)).post("/api/plans");
        assertEquals(422, r.statusCode(), r.asString());
        assertEquals("the plan is not valid", r.jsonPath().getString("error"));
        List<String> paths = r.jsonPath().getList("problems.path");
        assertEquals(true, paths.contains("primary.alpha"), "the problem names its path: " + r.asString());
        assertEquals(true, store.plan("access-invalid").isEmpty(), "nothing stored");
    }

    @Test
    void reads_healthAndMetrics_stayOpenWithoutAToken() {
        given().get("/api/experiments").then().statusCode(200);
        given().get("/api/alerts").then().statusCode(200);
        given().get("/q/health/ready").then().statusCode(200);
        given().get("/q/health/live").then().statusCode(200);
        given().get("/q/metrics").then().statusCode(200);
    }
}
