package dev.stopline.deploy;

import static io.restassured.RestAssured.given;
import static org.awaitility.Awaitility.await;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.service.ingest.CountsIngest;
import dev.stopline.testing.Counts;
import dev.stopline.testing.KafkaTestResource;
import io.quarkus.test.common.QuarkusTestResource;
import io.quarkus.test.junit.QuarkusTest;
import jakarta.inject.Inject;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.time.Duration;
import java.util.Set;
import java.util.TreeSet;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.junit.jupiter.api.Test;

/**
 * Every metric the Prometheus rules of {@code deploy/prometheus} watch is one a running daemon exports
 * (a renamed metric would otherwise silence an alert without anyone noticing), and the health endpoints
 * the Kubernetes probes call answer.
 */
@QuarkusTest
@QuarkusTestResource(KafkaTestResource.class)
class PrometheusRulesMetricsTest {
    /** Made by Prometheus itself for every scrape target, not exported by the application. */
    private static final Set<String> SYNTHETIC = Set.of("up");

    @Inject
    CountsIngest ingest;

    @Test
    void everyMetricNamedInTheAlertRules_isExportedAtQMetrics() throws Exception {
        String id = "metrics-rules";
        given().auth().oauth2(KafkaTestResource.API_TOKEN).contentType("application/yaml")
                .body(Counts.plan(id).getBytes(StandardCharsets.UTF_8)).post("/api/plans").then().statusCode(201);
        // one evaluation with a sample-ratio alert (1,100 vs 900 units: p = 7.7e-6 < 0.001, see
        // SampleRatioCheckTest), and one malformed record for a dead letter: the counters exist once incremented
        ingest.accept(new ConsumerRecord<>("stopline.counts", 0, 0L, id,
                Counts.proportion(id, 1, "orders", 1100, 110, 900, 90).getBytes(StandardCharsets.UTF_8)));
        ingest.accept(new ConsumerRecord<>("stopline.counts", 0, 1L, id, "{not json".getBytes(StandardCharsets.UTF_8)));

        Set<String> wanted = new TreeSet<>(PrometheusRules.metricNames(Path.of("deploy/prometheus/stopline-rules.yaml")));
        wanted.removeAll(SYNTHETIC);
        assertTrue(wanted.size() >= 4, "rules name the Stopline metrics: " + wanted);
        Set<String> missing = new TreeSet<>();
        // the consumer's own metrics appear once it has joined its group and fetched
        await().atMost(Duration.ofSeconds(60)).pollInterval(Duration.ofSeconds(1)).untilAsserted(() -> {
            String scrape = given().get("/q/metrics").then().statusCode(200).extract().asString();
            missing.clear();
            for (String m : wanted) {
                if (!scrape.contains("\n" + m + "{") && !scrape.contains("\n" + m + " ")) {
                    missing.add(m);
                }
            }
            assertEquals(Set.of(), missing, "named in deploy/prometheus/stopline-rules.yaml but not exported");
        });
    }

    @Test
    void theProbedHealthEndpoints_answer200() {
        for (String path : new String[] {"/q/health/started", "/q/health/ready", "/q/health/live"}) {
            given().get(path).then().statusCode(200);
        }
    }
}
