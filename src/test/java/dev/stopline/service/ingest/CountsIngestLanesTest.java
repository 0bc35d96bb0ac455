package dev.stopline.service.ingest;

import static io.restassured.RestAssured.given;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.monitor.Alert;
import dev.stopline.monitor.LookRecord;
import dev.stopline.service.store.Store;
import dev.stopline.testing.Counts;
import dev.stopline.testing.KafkaTestResource;
import dev.stopline.testing.Oracle;
import io.quarkus.test.common.QuarkusTestResource;
import io.quarkus.test.junit.QuarkusTest;
import jakarta.inject.Inject;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.junit.jupiter.api.Test;

/**
 * Polls big enough to be evaluated on several lanes ({@code %test.stopline.ingest.lanes=3}) give every
 * experiment the looks and alerts of the pure evaluator run on its snapshots alone, in order; repeats and
 * stale records among them change nothing. 40 experiments with effects from none to large and a few
 * with a skewed split (sample-ratio alerts), 30 snapshots each, round-robin, in polls of 600 records.
 */
@QuarkusTest
@QuarkusTestResource(KafkaTestResource.class)
class CountsIngestLanesTest {
    private static final int EXPERIMENTS = 40;
    private static final int SNAPSHOTS = 30;
    private static final int POLL = 600;

    @Inject
    CountsIngest ingest;
    @Inject
    Store store;

    @Test
    void pollsSplitOverLanes_giveEachExperimentThePureEvaluatorsLooksAndAlerts() {
        Map<String, List<String>> streams = new TreeMap<>();
        for (int i = 0; i < EXPERIMENTS; i++) {
            String id = String.format("lanes-%02d", i);
            given().auth().oauth2(KafkaTestResource.API_TOKEN).contentType("application/yaml")
                    .body(Counts.plan(id).getBytes(StandardCharsets.UTF_8)).when().post("/api/plans")
                    .then().statusCode(201);
            List<String> s = new ArrayList<>();
            for (int k = 1; k <= SNAPSHOTS; k++) {
                long control = 400L * k;
                long treatment = i % 10 == 9 ? 440L * k : 400L * k;      // every tenth: a 52/48 split
                long cOrders = control / 10;
                long tOrders = treatment * (100 + i) / 1000;            // 10% vs 10% .. 13.9%
                s.add(Counts.proportion(id, k, "orders", control, cOrders, treatment, tOrders));
            }
            streams.put(id, s);
        }
        List<ConsumerRecord<String, byte[]>> all = new ArrayList<>();
        for (int k = 0; k < SNAPSHOTS; k++) {
            for (Map.Entry<String, List<String>> e : streams.entrySet()) {
                add(all, e.getKey(), e.getValue().get(k));
                if (k % 7 == 3) {
                    add(all, e.getKey(), e.getValue().get(k));             // a repeat: acknowledged, no effect
                    add(all, e.getKey(), e.getValue().get(k - 1));         // stale: dead-lettered, no effect
                }
            }
        }
        long parallelBefore = ingest.parallelPolls();
        for (int from = 0; from < all.size(); from += POLL) {
            ingest.acceptAll(all.subList(from, Math.min(all.size(), from + POLL)));
        }
        assertTrue(ingest.parallelPolls() > parallelBefore, "the polls were split over lanes");

        int stopped = 0;
        int mismatched = 0;
        for (Map.Entry<String, List<String>> e : streams.entrySet()) {
            String id = e.getKey();
            Oracle expected = Oracle.of(Counts.plan(id), id, e.getValue());
            assertEquals(expected.primaryLookSequences(), store.looks(id).stream()
                    .filter(l -> LookRecord.PRIMARY.equals(l.role())).map(LookRecord::sequence).toList(), id);
            List<String> alerts = store.alerts(id, 100).stream().map(a -> a.alert().id()).sorted().toList();
            assertEquals(expected.alertIds().stream().sorted().toList(), alerts, id);
            assertEquals(SNAPSHOTS, store.state(id).orElseThrow().state().snapshots(), id);
            stopped += expected.alertIds().stream().anyMatch(a -> a.contains("efficacy")) ? 1 : 0;
            mismatched += expected.alertIds().stream().anyMatch(a -> a.contains("sample-ratio")) ? 1 : 0;
        }
        assertTrue(stopped > 0 && stopped < EXPERIMENTS, "test construction: some stop for efficacy, not all: "
                + stopped);
        assertTrue(mismatched > 0, "test construction: some sample-ratio alerts");
    }

    private static void add(List<ConsumerRecord<String, byte[]>> all, String id, String snapshot) {
        all.add(new ConsumerRecord<>("stopline.counts", 0, 1_000_000L + all.size(), id,
                snapshot.getBytes(StandardCharsets.UTF_8)));
    }
}
