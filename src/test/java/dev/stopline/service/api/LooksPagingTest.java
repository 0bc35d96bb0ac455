package dev.stopline.service.api;

import static io.restassured.RestAssured.given;
import static org.hamcrest.Matchers.containsString;
import static org.hamcrest.Matchers.equalTo;

import dev.stopline.service.ingest.CountsIngest;
import dev.stopline.testing.Counts;
import dev.stopline.testing.KafkaTestResource;
import io.quarkus.test.common.QuarkusTestResource;
import io.quarkus.test.junit.QuarkusTest;
import jakarta.inject.Inject;
import java.nio.charset.StandardCharsets;
import java.util.List;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.junit.jupiter.api.Test;

/**
 * The looks of an experiment page by snapshot sequence ({@code ?from=&limit=}), and the experiment's own
 * view shows only its latest look per metric: a history that grows by a row per snapshot is never read
 * whole by a list or a summary.
 */
@QuarkusTest
@QuarkusTestResource(KafkaTestResource.class)
class LooksPagingTest {
    @Inject
    CountsIngest ingest;

    @Test
    void looksPageBySequence_andTheExperimentShowsItsLatestLook() {
        String id = "looks-paging";
        given().auth().oauth2(KafkaTestResource.API_TOKEN).contentType("application/yaml")
                .body(Counts.plan(id).getBytes(StandardCharsets.UTF_8)).post("/api/plans").then().statusCode(201);
        for (int k = 1; k <= 3; k++) {        // fractions 0.2, 0.4, 0.6 of 10,000 per arm: a formal look each
            long n = 2000L * k;
            ingest.accept(new ConsumerRecord<>("stopline.counts", 0, 50_000L + k, id,
                    Counts.proportion(id, k, "orders", n, n / 10, n, n / 10 + k).getBytes(StandardCharsets.UTF_8)));
        }
        String looks = "/api/experiments/" + id + "/looks";
        given().when().get(looks).then().statusCode(200).body("sequence", equalTo(List.of(1, 2, 3)));
        given().when().get(looks + "?from=2&limit=1").then().statusCode(200).body("sequence", equalTo(List.of(2)));
        given().when().get(looks + "?from=3").then().statusCode(200).body("sequence", equalTo(List.of(3)));
        given().when().get(looks + "?limit=0").then().statusCode(422).body("error", containsString("limit"));
        given().when().get("/api/experiments/" + id).then().statusCode(200)
                .body("latest.orders.sequence", equalTo(3)).body("summary.latestDecision", equalTo("continue"));
    }
}
