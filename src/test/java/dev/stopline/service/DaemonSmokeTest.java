package dev.stopline.service;

import static io.restassured.RestAssured.given;
import static org.hamcrest.Matchers.hasItems;

import dev.stopline.testing.KafkaTestResource;
import io.quarkus.test.common.QuarkusTestResource;
import io.quarkus.test.junit.QuarkusTest;
import org.junit.jupiter.api.Test;

@QuarkusTest
@QuarkusTestResource(KafkaTestResource.class)
class DaemonSmokeTest {
    @Test
    void startedDaemon_listsTheExamplePlansOfTheConfigDirectory() {
        given().when().get("/api/experiments").then().statusCode(200)
                .body("experiment", hasItems("checkout-redesign", "recommendations-v2", "gift-wrap-upsell"));
    }
}
