package dev.stopline.service.store;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertInstanceOf;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.monitor.Alert;
import dev.stopline.monitor.AlertKind;
import dev.stopline.monitor.Evaluation;
import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.monitor.LookRecord;
import dev.stopline.monitor.MonitorState;
import dev.stopline.monitor.Monitoring;
import dev.stopline.plan.PlanCanonical;
import dev.stopline.plan.PlanParser;
import dev.stopline.testing.Counts;
import dev.stopline.wire.SnapshotParser;
import java.nio.charset.StandardCharsets;
import java.sql.Connection;
import java.sql.PreparedStatement;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Statement;
import java.sql.Timestamp;
import java.time.Duration;
import java.time.Instant;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.concurrent.TimeUnit;
import javax.sql.DataSource;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.TestInstance;

/**
 * The real {@link Store} on a real database, migrated by Flyway through {@link Database}: the same test
 * body runs on the embedded H2 default ({@link StoreH2Test}) and on a private PostgreSQL 15 cluster
 * ({@link StorePostgresTest}), so the SQL is shown to be portable rather than assumed to be. Evaluations
 * come from the real evaluator ({@link Monitoring}) fed wire-format snapshots; each test uses its own
 * experiment id on the class's database.
 */
@TestInstance(TestInstance.Lifecycle.PER_CLASS)
abstract class StoreContractTest {
    /** Microsecond precision: what both engines keep of a TIMESTAMP WITH TIME ZONE (H2 and PostgreSQL docs). */
    private static final Instant T0 = Instant.parse("2027-03-01T10:00:00.123456Z");
    private static final List<String> CHANNELS = List.of("kafka", "webhook:https://hooks.example.test/stopline");

    /** How long the other transaction holds its uncommitted row while ours runs into it. */
    private static final Duration RACE_WINDOW = Duration.ofMillis(500);

    private DataSource ds;
    private Store store;
    private final Map<String, MonitorState> states = new HashMap<>();

    abstract String jdbcUrl();

    abstract Optional<String> user();

    @BeforeAll
    void openDatabase() {
        ds = new Database().dataSource(jdbcUrl(), user(), Optional.empty(), 4);
        store = new Store(ds);
    }

    @AfterAll
    void closeDatabase() {
        if (ds != null) {
            new Database().close(ds);
        }
    }

    @Test
    void flyway_appliedEveryMigration_andTheStoreAnswers() throws SQLException {
        try (Connection c = ds.getConnection(); Statement s = c.createStatement();
             ResultSet rs = s.executeQuery("SELECT COUNT(*), MIN(CASE WHEN \"success\" THEN 1 ELSE 0 END) "
                     + "FROM \"flyway_schema_history\" WHERE \"version\" IS NOT NULL")) {
            // quoted: Flyway creates the table in lower case on both engines, and H2 folds unquoted names up
            assertTrue(rs.next());
            assertTrue(rs.getInt(1) >= 1, "at least V1 applied: " + rs.getInt(1));
            assertEquals(1, rs.getInt(2), "every applied migration succeeded");
        }
        assertTrue(store.reachable());
    }

    @Test
    void latestLooks_andPagesOfLooks_readOnlyTheSequencesAskedFor() {
        String id = "store-pages";
        savePlan(id, "registered", T0);
        for (int k = 1; k <= 3; k++) {         // fractions 0.2, 0.4, 0.6 of 10,000 per arm: a formal look each
            long n = 2000L * k;
            Evaluation e = evaluate(id, Counts.proportion(id, k, "orders", n, n / 10, n, n / 10 + k));
            store.commitEvaluation(e, "running", new Store.Position(0, 100L + k), CHANNELS, T0);
        }
        assertEquals(List.of(1L, 2L, 3L), sequences(store.looks(id)));
        assertEquals(List.of(3L), sequences(store.latestLooks(id)));
        assertEquals(List.of(2L), sequences(store.looks(id, 2, 1)));
        assertEquals(List.of(2L, 3L), sequences(store.looks(id, 2, 10)));
        assertEquals(List.of(1L, 2L, 3L), sequences(store.looks(id, 0, 3)));
        assertEquals(List.of(), sequences(store.looks(id, 4, 10)));
        assertEquals(List.of(), store.latestLooks("store-nobody"));
        assertEquals(List.of(1L, 2L, 3L), sequences(store.looks(id, LookRecord.PRIMARY)));
        assertEquals(List.of(), sequences(store.looks(id, LookRecord.GUARDRAIL)));
    }

    private static List<Long> sequences(List<LookRecord> looks) {
        return looks.stream().map(LookRecord::sequence).toList();
    }

    @Test
    void webhookSwitch_keepsTheFirstReason_andEnablingRemovesIt() {
        String url = "https://hooks.example.test/contract-" + System.nanoTime();
        Instant first = Instant.parse("2027-03-04T10:00:00Z");
        assertTrue(!store.disabledWebhooks().containsKey(url));
        store.disableWebhook(url, "answered 410 Gone to alert a", first);
        store.disableWebhook(url, "answered 410 Gone to alert b", first.plusSeconds(60));
        Store.DisabledWebhook d = store.disabledWebhooks().get(url);
        assertEquals(new Store.DisabledWebhook(url, first, "answered 410 Gone to alert a"), d);
        assertTrue(store.enableWebhook(url));
        assertTrue(!store.enableWebhook(url), "already on");
        assertTrue(!store.disabledWebhooks().containsKey(url));
    }

    @Test
    void savePlan_thenReplaceBeforeTheFirstLook_bumpsTheVersionAndAppendsTwoAuditRows() {
        String id = "store-plan";
        int v1 = savePlan(id, "registered", T0);
        int v2 = savePlan(id, "replaced", T0.plusSeconds(60));
        assertEquals(1, v1);
        assertEquals(2, v2);
        Store.StoredPlan p = store.plan(id).orElseThrow();
        assertEquals(2, p.version());
        assertEquals(T0.plusSeconds(60), p.registeredAt(), "timestamps round-trip to the microsecond");
        assertFalse(p.locked());
        assertTrue(p.planJson().contains("\"experiment\""), p.planJson());
        List<Store.AuditEntry> audit = store.audit(id);
        assertEquals(List.of("registered", "replaced"), audit.stream().map(Store.AuditEntry::action).toList());
        assertEquals(List.of(1, 2), audit.stream().map(Store.AuditEntry::version).toList());
        assertEquals("tester", audit.get(0).actor());
        assertEquals(T0, audit.get(0).at());
        assertNull(audit.get(0).alphaSpent(), "no alpha spent before the first look");
        assertTrue(audit.get(0).id() < audit.get(1).id(), "identity column increases");
        assertTrue(store.plans().stream().anyMatch(x -> x.experimentId().equals(id)));
    }

    @Test
    void commitEvaluation_atAFormalLook_storesStateLookAndPosition_andLocksThePlanWithAnAuditRow() {
        String id = "store-look";
        savePlan(id, "registered", T0);
        // 2,000 units per arm: fraction 0.2 of 10,000 per arm on the n_c n_t/(n_c+n_t) scale, the first of 5 looks
        Evaluation e = evaluate(id, Counts.proportion(id, 1, "orders", 2000, 200, 2000, 210));
        assertEquals(1, e.looks().stream().filter(l -> LookRecord.PRIMARY.equals(l.role())).count(),
                "the evaluator took the first formal look");
        List<Alert> fresh = store.commitEvaluation(e, "running", new Store.Position(0, 41L), CHANNELS, T0);
        assertEquals(List.of(), fresh, "an even split at 10% vs 10.5% crosses nothing");

        Store.StoredState st = store.state(id).orElseThrow();
        assertEquals(1, st.state().lastSequence());
        assertEquals(new Store.Position(0, 41L), st.position());
        assertTrue(st.position().covers(0, 41) && !st.position().covers(0, 42));
        assertEquals("running", st.status());
        assertEquals(e.looks().size(), store.looks(id).size());
        assertEquals(e.looks().get(0).z(), store.looks(id).get(0).z(), 0.0, "the look's JSON round-trips exactly");

        Store.StoredPlan p = store.plan(id).orElseThrow();
        assertTrue(p.locked(), "the first look locks the plan");
        Store.AuditEntry lock = store.audit(id).get(store.audit(id).size() - 1);
        assertEquals("locked", lock.action());
        assertEquals("stopline", lock.actor());
        assertEquals(e.state().cumulativeAlphaSpent(), lock.alphaSpent(), 0.0, "alpha spent at the lock");

        store.advancePosition(id, new Store.Position(0, 42L), T0.plusSeconds(1));
        assertEquals(new Store.Position(0, 42L), store.state(id).orElseThrow().position());
        assertEquals(1, store.states().stream().filter(s -> s.state().experiment().equals(id)).count());
    }

    @Test
    void sameAlertCommittedTwice_isStoredOnce_andIsNotFreshTheSecondTime() {
        String id = "store-alert-once";
        savePlan(id, "registered", T0);
        // 1,100 vs 900 units: chi-square 20 on 1 df, p = 7.7e-6 < 0.001 (Commons Math ChiSquareTest, see
        // SampleRatioCheckTest): one sample-ratio alert, and no formal look yet (fraction 0.099 < 0.2)
        Evaluation e = evaluate(id, Counts.proportion(id, 1, "orders", 1100, 110, 900, 90));
        assertEquals(List.of(Alert.idOf(id, AlertKind.SAMPLE_RATIO, null, 1)),
                e.alerts().stream().map(Alert::id).toList());
        List<Alert> first = store.commitEvaluation(e, "sample-ratio-mismatch", new Store.Position(0, 1L), CHANNELS, T0);
        assertEquals(1, first.size());

        // what a second instance, or a redelivery after a crash before the offset commit, would write
        Evaluation again = new Evaluation(e.state(), List.of(), e.sampleRatio(), e.alerts());
        List<Alert> second = store.commitEvaluation(again, "sample-ratio-mismatch", new Store.Position(0, 1L),
                CHANNELS, T0.plusSeconds(5));
        assertEquals(List.of(), second, "an alert id already stored is not fresh: it is not delivered again");
        List<Store.StoredAlert> stored = store.alerts(id, 100);
        assertEquals(1, stored.size(), "stored once");
        assertEquals(T0, stored.get(0).createdAt(), "the first commit's row is kept");
        assertEquals(CHANNELS.size(), store.deliveries(first.get(0).id()).size(), "one outbox row per channel, once");
    }

    @Test
    void sameAlertInsertedConcurrentlyByAnotherTransaction_isNotFresh_andTheRestOfTheEvaluationCommits()
            throws Exception {
        String id = "store-alert-race";
        savePlan(id, "registered", T0);
        Evaluation e = evaluate(id, Counts.proportion(id, 1, "orders", 1100, 110, 900, 90));
        String alertId = e.alerts().get(0).id();
        ExecutorService pool = Executors.newSingleThreadExecutor();
        try (Connection other = ds.getConnection()) {
            // another instance (during a rebalance) has inserted the same crossing and not committed yet
            other.setAutoCommit(false);
            try (PreparedStatement ps = other.prepareStatement("INSERT INTO alert (alert_id, experiment_id, kind, "
                    + "metric, look_number, sequence, payload_json, created_at) VALUES (?, ?, ?, NULL, NULL, 1, ?, ?)")) {
                ps.setString(1, alertId);
                ps.setString(2, id);
                ps.setString(3, AlertKind.SAMPLE_RATIO.wireName());
                ps.setString(4, Json.write(e.alerts().get(0)));
                ps.setTimestamp(5, Timestamp.from(T0));
                ps.executeUpdate();
            }
            Future<List<Alert>> ours = pool.submit(() -> store.commitEvaluation(e, "sample-ratio-mismatch",
                    new Store.Position(0, 7L), CHANNELS, T0.plusSeconds(1)));
            Thread.sleep(RACE_WINDOW.toMillis()); // our insert now waits on the other transaction's key
            other.commit();
            assertEquals(List.of(), ours.get(30, TimeUnit.SECONDS),
                    "the other transaction's alert is not fresh for us: it is not delivered twice");
        } finally {
            pool.shutdownNow();
        }
        assertEquals(new Store.Position(0, 7L), store.state(id).orElseThrow().position(),
                "the evaluation itself committed");
        assertEquals(1, store.alerts(id, 10).size());
        assertEquals(List.of(), store.deliveries(alertId), "no outbox rows from the losing transaction");
    }

    @Test
    void outbox_dueDeliveriesAndRecordAttempt_followRetriesToDelivery() {
        String id = "store-outbox";
        savePlan(id, "registered", T0);
        Evaluation e = evaluate(id, Counts.proportion(id, 1, "orders", 1100, 110, 900, 90));
        String alertId = store.commitEvaluation(e, "sample-ratio-mismatch", new Store.Position(0, 1L), CHANNELS, T0)
                .get(0).id();

        assertEquals(List.of(), ours(store.dueDeliveries(T0.minusMillis(1), 100), alertId), "not due before now");
        List<Store.OutboxItem> due = ours(store.dueDeliveries(T0, 100), alertId);
        assertEquals(CHANNELS, due.stream().map(Store.OutboxItem::channel).sorted().toList());
        assertEquals(alertId, due.get(0).alert().id(), "the alert's JSON comes back with the item");

        Instant retry = T0.plusSeconds(30);
        store.recordAttempt(alertId, CHANNELS.get(1), "pending", retry, "HTTP 503", T0.plusSeconds(1));
        store.recordAttempt(alertId, CHANNELS.get(0), "delivered", null, null, T0.plusSeconds(1));
        assertEquals(List.of(), ours(store.dueDeliveries(retry.minusMillis(1), 100), alertId),
                "the webhook waits for its retry time; the delivered channel is done");
        List<Store.OutboxItem> later = ours(store.dueDeliveries(retry, 100), alertId);
        assertEquals(1, later.size());
        assertEquals(1, later.get(0).attempts());
        assertEquals("HTTP 503", store.deliveries(alertId).stream().filter(d -> d.channel().equals(CHANNELS.get(1)))
                .findFirst().orElseThrow().lastError(), "the failure is shown while the delivery is pending");

        store.recordAttempt(alertId, CHANNELS.get(1), "delivered", null, null, retry);
        assertEquals(List.of(), ours(store.dueDeliveries(retry.plus(Duration.ofDays(1)), 100), alertId));
        Map<String, Store.DeliveryStatus> byChannel = new HashMap<>();
        store.deliveries(alertId).forEach(d -> byChannel.put(d.channel(), d));
        assertEquals(2, byChannel.get(CHANNELS.get(1)).attempts());
        assertNull(byChannel.get(CHANNELS.get(1)).lastError(), "a delivery clears the last failure");
        assertEquals("delivered", byChannel.get(CHANNELS.get(1)).status());
        assertEquals(retry, byChannel.get(CHANNELS.get(1)).deliveredAt());
        assertEquals(T0.plusSeconds(1), byChannel.get(CHANNELS.get(0)).deliveredAt());
    }

    /**
     * An endpoint that is down leaves its rows due again and again; asked for together with the others,
     * more of them than a round takes would hide a new alert's topic row behind them.
     */
    @Test
    void outbox_webhookRetriesDue_doNotHideANewAlertsTopicRow() {
        String webhook = CHANNELS.get(1);
        List<String> older = new java.util.ArrayList<>();
        for (int i = 0; i < 3; i++) {
            String id = "store-backlog-" + i;
            savePlan(id, "registered", T0);
            String alertId = store.commitEvaluation(evaluate(id, Counts.proportion(id, 1, "orders", 1100, 110, 900, 90)),
                    "sample-ratio-mismatch", new Store.Position(0, 1L), CHANNELS, T0).get(0).id();
            store.recordAttempt(alertId, "kafka", "delivered", null, null, T0);
            store.recordAttempt(alertId, webhook, "pending", T0.plusSeconds(30), "connection refused", T0);
            older.add(alertId);
        }
        String fresh = "store-backlog-new";
        savePlan(fresh, "registered", T0);
        Instant later = T0.plusSeconds(60);
        String newAlert = store.commitEvaluation(evaluate(fresh, Counts.proportion(fresh, 1, "orders", 1100, 110, 900,
                90)), "sample-ratio-mismatch", new Store.Position(0, 1L), CHANNELS, later).get(0).id();

        List<Store.OutboxItem> together = store.dueDeliveries(later, 3).stream()
                .filter(o -> older.contains(o.alertId()) || o.alertId().equals(newAlert)).toList();
        assertTrue(together.stream().allMatch(o -> older.contains(o.alertId())),
                "the failure mode: asked together, the three older webhook retries fill a round of three");

        List<Store.OutboxItem> topicAndLog = store.dueDeliveries(later, 3, false);
        assertTrue(topicAndLog.stream().anyMatch(o -> o.alertId().equals(newAlert) && o.channel().equals("kafka")),
                () -> "the new alert's topic row is due: " + topicAndLog);
        assertTrue(topicAndLog.stream().noneMatch(o -> o.channel().startsWith("webhook:")));
        List<Store.OutboxItem> hooks = store.dueDeliveries(later, 100, true);
        assertTrue(hooks.stream().allMatch(o -> o.channel().startsWith("webhook:")));
        assertTrue(hooks.stream().map(Store.OutboxItem::alertId).toList().containsAll(older));
    }

    @Test
    void acknowledge_keepsTheFirstAcknowledgement_andAnUnknownAlertIsRefused() {
        String id = "store-ack";
        savePlan(id, "registered", T0);
        Evaluation e = evaluate(id, Counts.proportion(id, 1, "orders", 1100, 110, 900, 90));
        String alertId = store.commitEvaluation(e, "sample-ratio-mismatch", new Store.Position(0, 1L), CHANNELS, T0)
                .get(0).id();
        assertNull(store.alert(alertId).orElseThrow().acknowledgedAt());

        assertTrue(store.acknowledge(alertId, "on-call", T0.plusSeconds(10)));
        assertTrue(store.acknowledge(alertId, "someone-else", T0.plusSeconds(20)));
        Store.StoredAlert a = store.alert(alertId).orElseThrow();
        assertEquals("on-call", a.acknowledgedBy());
        assertEquals(T0.plusSeconds(10), a.acknowledgedAt());
        assertFalse(store.acknowledge(id + "/efficacy/orders/9", "on-call", T0), "no such alert");
    }

    @Test
    void alerts_listNewestFirst_andFilterByExperiment() {
        String a = "store-list-a";
        String b = "store-list-b";
        savePlan(a, "registered", T0);
        savePlan(b, "registered", T0);
        store.commitEvaluation(evaluate(a, Counts.proportion(a, 1, "orders", 1100, 110, 900, 90)), "x",
                new Store.Position(0, 1L), CHANNELS, T0);
        store.commitEvaluation(evaluate(b, Counts.proportion(b, 1, "orders", 1100, 110, 900, 90)), "x",
                new Store.Position(0, 2L), CHANNELS, T0.plusSeconds(1));
        assertEquals(List.of(a), store.alerts(a, 10).stream().map(s -> s.alert().experiment()).toList());
        List<String> both = store.alerts(null, 10_000).stream().map(s -> s.alert().experiment())
                .filter(x -> x.equals(a) || x.equals(b)).toList();
        assertEquals(List.of(b, a), both, "newest first");
        assertNotNull(store.alerts(null, 1).get(0));
        assertEquals(1, store.alerts(null, 1).size(), "limit applies");
    }

    // ------------------------------------------------------------------ helpers

    private int savePlan(String id, String action, Instant at) {
        String yaml = Counts.plan(id);
        var plan = PlanParser.parseYaml(yaml);
        return store.savePlan(id, PlanCanonical.toJson(plan), yaml, PlanCanonical.sha256(plan), "tester", action,
                null, null, at);
    }

    /** The real evaluator on a wire snapshot, continuing from this test's previous evaluation. */
    private Evaluation evaluate(String id, String snapshotJson) {
        ExperimentMonitor monitor = ExperimentMonitor.of(PlanParser.parseYaml(Counts.plan(id)), 1);
        Monitoring m = new Monitoring(SnapshotParser.withDefaults(), x -> monitor);
        Monitoring.Step step = m.process(snapshotJson.getBytes(StandardCharsets.UTF_8), id, states::get);
        Monitoring.Evaluated ev = assertInstanceOf(Monitoring.Evaluated.class, step, () -> "not evaluated: " + step);
        states.put(id, ev.evaluation().state());
        return ev.evaluation();
    }

    private static List<Store.OutboxItem> ours(List<Store.OutboxItem> items, String alertId) {
        return items.stream().filter(i -> i.alertId().equals(alertId)).toList();
    }
}
