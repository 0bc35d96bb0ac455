package dev.stopline.service.api;

import static io.restassured.RestAssured.given;
import static org.awaitility.Awaitility.await;
import static org.hamcrest.Matchers.containsString;
import static org.hamcrest.Matchers.equalTo;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.service.ingest.CountsIngest;
import dev.stopline.service.store.Store;
import dev.stopline.testing.Counts;
import dev.stopline.testing.KafkaTestResource;
import dev.stopline.testing.WebhookReceiver;
import io.quarkus.test.common.QuarkusTestResource;
import io.quarkus.test.junit.QuarkusTest;
import io.restassured.path.json.JsonPath;
import jakarta.inject.Inject;
import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.time.Instant;
import java.util.Map;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.junit.jupiter.api.Test;

/**
 * A webhook endpoint that answers 410 Gone is switched off in the database, so it stays off for every
 * instance and after a restart (the dispatcher reads the switch at every round, exactly as a fresh process
 * does), until {@code POST /api/webhooks/enable}. Uses the shared receiver every {@code @QuarkusTest} sends
 * to, and leaves it on and answering.
 */
@QuarkusTest
@QuarkusTestResource(KafkaTestResource.class)
class WebhookEndpointsTest {
    private static final Duration WAIT = Duration.ofSeconds(30);

    @Inject
    CountsIngest ingest;
    @Inject
    Store store;

    @Test
    void a410SwitchesTheEndpointOffInTheDatabase_untilItIsEnabledAgain() {
        WebhookReceiver receiver = WebhookReceiver.shared();
        String url = receiver.url();
        try {
            given().when().get("/api/webhooks").then().statusCode(401);
            given().auth().oauth2(KafkaTestResource.API_TOKEN).when().get("/api/webhooks").then().statusCode(200)
                    .body("url", equalTo(java.util.List.of(url))).body("enabled", equalTo(java.util.List.of(true)));

            receiver.failFirst(-1, 410, null);
            String first = raiseSampleRatioAlert("gone-first");
            await().atMost(WAIT).until(() -> delivery(first, "webhook:" + url).equals("abandoned"));
            JsonPath endpoints = given().auth().oauth2(KafkaTestResource.API_TOKEN).when().get("/api/webhooks")
                    .then().statusCode(200).extract().jsonPath();
            assertFalse(endpoints.getBoolean("[0].enabled"), "switched off by the 410");
            assertTrue(endpoints.getString("[0].reason").contains("410"), endpoints.prettify());
            assertTrue(store.disabledWebhooks().containsKey(url), "the switch is in the database");
            assertEquals(1, receiver.failed().stream().filter(first::equals).count(), "asked once");

            receiver.failFirst(0, 200, null);                 // the receiver is back, but stays switched off
            String whileOff = raiseSampleRatioAlert("gone-while-off");
            await().atMost(WAIT).until(() -> delivery(whileOff, "webhook:" + url).equals("abandoned"));
            assertTrue(receiver.verified().stream().noneMatch(d -> d.id().equals(whileOff)), "not sent while off");

            given().auth().oauth2(KafkaTestResource.API_TOKEN).contentType("application/json")
                    .body(Map.of("url", url)).when().post("/api/webhooks/enable").then().statusCode(200)
                    .body("enabled", equalTo(true));
            assertFalse(store.disabledWebhooks().containsKey(url));
            String after = raiseSampleRatioAlert("gone-enabled");
            await().atMost(WAIT).until(() -> receiver.verified().stream().anyMatch(d -> d.id().equals(after)));
            assertEquals("delivered", delivery(after, "webhook:" + url));

            // switched off by another instance (or before a restart): this one follows the database
            store.disableWebhook(url, "answered 410 Gone at another instance", Instant.now());
            String elsewhere = raiseSampleRatioAlert("gone-elsewhere");
            await().atMost(WAIT).until(() -> delivery(elsewhere, "webhook:" + url).equals("abandoned"));
            assertTrue(receiver.verified().stream().noneMatch(d -> d.id().equals(elsewhere)));
        } finally {
            receiver.failFirst(0, 200, null);
            store.enableWebhook(url);
            await().atMost(WAIT).until(() -> given().auth().oauth2(KafkaTestResource.API_TOKEN).when()
                    .get("/api/webhooks").jsonPath().getBoolean("[0].enabled"));
        }
    }

    @Test
    void enable_refusesWhatItCannotDo_withTheReason() {
        given().contentType("application/json").body(Map.of("url", "http://x")).when().post("/api/webhooks/enable")
                .then().statusCode(401);
        given().auth().oauth2(KafkaTestResource.API_TOKEN).contentType("application/json")
                .body(Map.of("url", "http://127.0.0.1:1/not-configured")).when().post("/api/webhooks/enable")
                .then().statusCode(404).body("error", containsString("not-configured is configured"));
        given().auth().oauth2(KafkaTestResource.API_TOKEN).contentType("application/json").body("{}")
                .when().post("/api/webhooks/enable").then().statusCode(422).body("error", containsString("url"));
    }

    /** Registers a plan and feeds one snapshot with a 55/45 split: a sample-ratio alert. Returns its id. */
    private String raiseSampleRatioAlert(String id) {
        given().auth().oauth2(KafkaTestResource.API_TOKEN).contentType("application/yaml")
                .body(Counts.plan(id).getBytes(StandardCharsets.UTF_8)).post("/api/plans").then().statusCode(201);
        ingest.accept(new ConsumerRecord<>("stopline.counts", 0, 0L, id,
                Counts.proportion(id, 1, "orders", 1100, 110, 900, 90).getBytes(StandardCharsets.UTF_8)));
        return id + "/sample-ratio/-/1";
    }

    private static String delivery(String alertId, String channel) {
        JsonPath alerts = given().when().get("/api/alerts?experiment=" + alertId.substring(0, alertId.indexOf('/')))
                .then().statusCode(200).extract().jsonPath();
        String status = alerts.getString("find { it.alert.id == '" + alertId + "' }.deliveries.find { it.channel == '"
                + channel + "' }.status");
        return status == null ? "" : status;
    }
}
