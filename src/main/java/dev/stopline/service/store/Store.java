package dev.stopline.service.store;

import dev.stopline.monitor.Alert;
import dev.stopline.monitor.Evaluation;
import dev.stopline.monitor.LookRecord;
import dev.stopline.monitor.MonitorState;
import jakarta.enterprise.context.ApplicationScoped;
import jakarta.inject.Inject;
import java.sql.Connection;
import java.sql.PreparedStatement;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Savepoint;
import java.sql.Timestamp;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import javax.sql.DataSource;

/**
 * Everything Stopline persists, in plain portable SQL (H2 by default, PostgreSQL in production).
 *
 * <p>The one write that matters is {@link #commitEvaluation}: state, looks, alerts and their outbox
 * rows go in one transaction, so a crash leaves either all of a snapshot's effects or none; an alert
 * whose id already exists is skipped (primary key), so a redelivered record or a second instance can
 * never alert twice.
 */
@ApplicationScoped
public class Store {
    private final DataSource ds;

    @Inject
    public Store(DataSource ds) {
        this.ds = ds;
    }

    // ------------------------------------------------------------------ plans

    public record StoredPlan(String experimentId, int version, String planJson, String source, String contentHash,
                             Instant registeredAt, Instant lockedAt) {
        public boolean locked() {
            return lockedAt != null;
        }
    }

    public record AuditEntry(long id, String experimentId, Instant at, String actor, String action, int version,
                             String contentHash, Double alphaSpent, String detail) {
    }

    public List<StoredPlan> plans() {
        return query("SELECT experiment_id, version, plan_json, plan_source, content_hash, registered_at, locked_at "
                + "FROM plan ORDER BY experiment_id", ps -> { }, Store::plan);
    }

    public Optional<StoredPlan> plan(String experimentId) {
        return query("SELECT experiment_id, version, plan_json, plan_source, content_hash, registered_at, locked_at "
                + "FROM plan WHERE experiment_id = ?", ps -> ps.setString(1, experimentId), Store::plan)
                .stream().findFirst();
    }

    private static StoredPlan plan(ResultSet rs) throws SQLException {
        return new StoredPlan(rs.getString(1), rs.getInt(2), rs.getString(3), rs.getString(4), rs.getString(5),
                instant(rs, 6), instant(rs, 7));
    }

    /** Inserts a new plan or replaces an unlocked one, with an audit row; returns the stored version. */
    public int savePlan(String experimentId, String planJson, String source, String hash, String actor,
                        String action, Double alphaSpent, String detail, Instant now) {
        return inTransaction(c -> {
            Optional<StoredPlan> old = planForUpdate(c, experimentId);
            int version = old.map(p -> p.version() + 1).orElse(1);
            if (old.isPresent()) {
                try (PreparedStatement ps = c.prepareStatement("UPDATE plan SET version = ?, plan_json = ?, "
                        + "plan_source = ?, content_hash = ?, registered_at = ? WHERE experiment_id = ?")) {
                    ps.setInt(1, version);
                    ps.setString(2, planJson);
                    ps.setString(3, source);
                    ps.setString(4, hash);
                    ps.setTimestamp(5, Timestamp.from(now));
                    ps.setString(6, experimentId);
                    ps.executeUpdate();
                }
            } else {
                try (PreparedStatement ps = c.prepareStatement("INSERT INTO plan (experiment_id, version, plan_json, "
                        + "plan_source, content_hash, registered_at) VALUES (?, ?, ?, ?, ?, ?)")) {
                    ps.setString(1, experimentId);
                    ps.setInt(2, version);
                    ps.setString(3, planJson);
                    ps.setString(4, source);
                    ps.setString(5, hash);
                    ps.setTimestamp(6, Timestamp.from(now));
                    ps.executeUpdate();
                }
            }
            audit(c, experimentId, now, actor, action, version, hash, alphaSpent, detail);
            return version;
        });
    }

    private Optional<StoredPlan> planForUpdate(Connection c, String experimentId) throws SQLException {
        try (PreparedStatement ps = c.prepareStatement("SELECT experiment_id, version, plan_json, plan_source, "
                + "content_hash, registered_at, locked_at FROM plan WHERE experiment_id = ? FOR UPDATE")) {
            ps.setString(1, experimentId);
            try (ResultSet rs = ps.executeQuery()) {
                return rs.next() ? Optional.of(plan(rs)) : Optional.empty();
            }
        }
    }

    public List<AuditEntry> audit(String experimentId) {
        return query("SELECT id, experiment_id, at, actor, action, version, content_hash, alpha_spent, detail "
                        + "FROM plan_audit WHERE experiment_id = ? ORDER BY id", ps -> ps.setString(1, experimentId),
                rs -> new AuditEntry(rs.getLong(1), rs.getString(2), instant(rs, 3), rs.getString(4), rs.getString(5),
                        rs.getInt(6), rs.getString(7), (Double) rs.getObject(8), rs.getString(9)));
    }

    private static void audit(Connection c, String experimentId, Instant at, String actor, String action, int version,
                              String hash, Double alphaSpent, String detail) throws SQLException {
        try (PreparedStatement ps = c.prepareStatement("INSERT INTO plan_audit (experiment_id, at, actor, action, "
                + "version, content_hash, alpha_spent, detail) VALUES (?, ?, ?, ?, ?, ?, ?, ?)")) {
            ps.setString(1, experimentId);
            ps.setTimestamp(2, Timestamp.from(at));
            ps.setString(3, actor);
            ps.setString(4, action);
            ps.setInt(5, version);
            ps.setString(6, hash);
            if (alphaSpent == null) {
                ps.setNull(7, java.sql.Types.DOUBLE);
            } else {
                ps.setDouble(7, alphaSpent);
            }
            ps.setString(8, detail);
            ps.executeUpdate();
        }
    }

    // ------------------------------------------------------------------ monitor state

    /** Where a state was last advanced from: the Kafka partition and offset of the record. */
    public record Position(Integer partition, Long offset) {
        public static final Position NONE = new Position(null, null);

        /** Whether a record at {@code partition/offset} was already applied to this state. */
        public boolean covers(int partition, long offset) {
            return this.partition != null && this.partition == partition && this.offset != null
                    && offset <= this.offset;
        }
    }

    public record StoredState(MonitorState state, Position position, String status, Instant updatedAt) {
    }

    public Optional<StoredState> state(String experimentId) {
        return query("SELECT state_json, source_partition, source_offset, status, updated_at FROM monitor_state "
                        + "WHERE experiment_id = ?", ps -> ps.setString(1, experimentId),
                rs -> new StoredState(Json.read(rs.getString(1), MonitorState.class),
                        new Position((Integer) rs.getObject(2), rs.getObject(3) == null ? null : rs.getLong(3)),
                        rs.getString(4), instant(rs, 5))).stream().findFirst();
    }

    public List<StoredState> states() {
        return query("SELECT state_json, source_partition, source_offset, status, updated_at FROM monitor_state "
                        + "ORDER BY experiment_id", ps -> { },
                rs -> new StoredState(Json.read(rs.getString(1), MonitorState.class),
                        new Position((Integer) rs.getObject(2), rs.getObject(3) == null ? null : rs.getLong(3)),
                        rs.getString(4), instant(rs, 5)));
    }

    /**
     * Stores one evaluation atomically: the new state, its looks, the alerts not seen before and one
     * outbox row per alert and channel; locks the plan at its first look. Returns the alerts that were
     * new (the others already existed and are not delivered again).
     */
    public List<Alert> commitEvaluation(Evaluation e, String status, Position position, List<String> channels,
                                        Instant now) {
        return inTransaction(c -> {
            upsertStates(c, List.of(Change.evaluated(e, status, position)), now);
            return writeEvaluation(c, e, channels, now);
        });
    }

    /** One snapshot's effect in a batch: an evaluation (with its status), or only a new position (a duplicate). */
    public record Change(String experiment, Evaluation evaluation, String status, Position position) {
        public static Change evaluated(Evaluation e, String status, Position position) {
            return new Change(e.state().experiment(), e, status, position);
        }

        public static Change positionOnly(String experiment, Position position) {
            return new Change(experiment, null, null, position);
        }
    }

    /**
     * Stores the effects of several snapshots (one poll of the counts topic) in one transaction: every
     * look, alert and outbox row, and each experiment's state once, as left by its last change; a
     * duplicate only moves the position. Returns the alerts that were new, in order. All or nothing,
     * like {@link #commitEvaluation}: the batch's offsets are committed only after this returns.
     */
    public List<Alert> commitBatch(List<Change> changes, List<String> channels, Instant now) {
        return inTransaction(c -> {
            List<Alert> fresh = new ArrayList<>();
            Map<String, Change> lastState = new java.util.LinkedHashMap<>();
            Map<String, Position> lastPosition = new java.util.LinkedHashMap<>();
            Map<String, Double> lockAt = new java.util.LinkedHashMap<>();
            List<LookRecord> looks = new ArrayList<>();
            for (Change ch : changes) {
                Evaluation e = ch.evaluation();
                if (e != null) {
                    looks.addAll(e.looks());
                    fresh.addAll(insertAlerts(c, e, channels, now));
                    if (hasPrimaryLook(e)) {       // the first primary look of the batch locks the plan, if not yet
                        lockAt.putIfAbsent(ch.experiment(), e.state().cumulativeAlphaSpent());
                    }
                    lastState.put(ch.experiment(), ch);
                }
                lastPosition.put(ch.experiment(), ch.position());
            }
            // one statement per kind of row, sent as a JDBC batch: a round trip each on PostgreSQL, not one per row
            if (!looks.isEmpty()) {
                insertLooks(c, looks, now);
            }
            for (Map.Entry<String, Double> l : lockAt.entrySet()) {
                lockPlan(c, l.getKey(), l.getValue(), now);
            }
            List<Change> states = new ArrayList<>();
            List<Map.Entry<String, Position>> positionsOnly = new ArrayList<>();
            for (Map.Entry<String, Position> p : lastPosition.entrySet()) {
                Change ch = lastState.get(p.getKey());
                if (ch != null) {
                    states.add(new Change(ch.experiment(), ch.evaluation(), ch.status(), p.getValue()));
                } else {
                    positionsOnly.add(p);
                }
            }
            upsertStates(c, states, now);
            updatePositions(c, positionsOnly, now);
            return fresh;
        });
    }

    private static boolean hasPrimaryLook(Evaluation e) {
        for (LookRecord l : e.looks()) {
            if (LookRecord.PRIMARY.equals(l.role())) {
                return true;
            }
        }
        return false;
    }

    /** Each experiment's state as left by its last change of the batch: updates in one batch, inserts in another. */
    private static void upsertStates(Connection c, List<Change> states, Instant now) throws SQLException {
        if (states.isEmpty()) {
            return;
        }
        String[] json = new String[states.size()];
        int[] updated;
        try (PreparedStatement ps = c.prepareStatement("UPDATE monitor_state SET last_sequence = ?, source_partition = ?, "
                + "source_offset = ?, status = ?, state_json = ?, updated_at = ? WHERE experiment_id = ?")) {
            for (int i = 0; i < states.size(); i++) {
                Change ch = states.get(i);
                json[i] = Json.write(ch.evaluation().state());
                bindState(ps, ch.evaluation().state(), ch.status(), ch.position(), json[i], now);
                ps.setString(7, ch.experiment());
                ps.addBatch();
            }
            updated = ps.executeBatch();
        }
        List<Integer> missing = new ArrayList<>();
        for (int i = 0; i < states.size(); i++) {
            if (updated[i] == 0 || updated[i] == java.sql.Statement.SUCCESS_NO_INFO && !stateExists(c,
                    states.get(i).experiment())) {
                missing.add(i);
            }
        }
        if (missing.isEmpty()) {
            return;
        }
        try (PreparedStatement ps = c.prepareStatement("INSERT INTO monitor_state (last_sequence, source_partition, "
                + "source_offset, status, state_json, updated_at, experiment_id) VALUES (?, ?, ?, ?, ?, ?, ?)")) {
            for (int i : missing) {
                Change ch = states.get(i);
                bindState(ps, ch.evaluation().state(), ch.status(), ch.position(), json[i], now);
                ps.setString(7, ch.experiment());
                ps.addBatch();
            }
            ps.executeBatch();
        }
    }

    private static boolean stateExists(Connection c, String experimentId) throws SQLException {
        try (PreparedStatement ps = c.prepareStatement("SELECT 1 FROM monitor_state WHERE experiment_id = ?")) {
            ps.setString(1, experimentId);
            try (ResultSet rs = ps.executeQuery()) {
                return rs.next();
            }
        }
    }

    /** The positions of experiments whose records in the batch were all duplicates, in one batch. */
    private static void updatePositions(Connection c, List<Map.Entry<String, Position>> positions, Instant now)
            throws SQLException {
        if (positions.isEmpty()) {
            return;
        }
        try (PreparedStatement ps = c.prepareStatement("UPDATE monitor_state SET source_partition = ?, "
                + "source_offset = ?, updated_at = ? WHERE experiment_id = ?")) {
            for (Map.Entry<String, Position> p : positions) {
                ps.setObject(1, p.getValue().partition(), java.sql.Types.INTEGER);
                ps.setObject(2, p.getValue().offset(), java.sql.Types.BIGINT);
                ps.setTimestamp(3, Timestamp.from(now));
                ps.setString(4, p.getKey());
                ps.addBatch();
            }
            ps.executeBatch();
        }
    }

    /** The alerts of one evaluation that are new, each with its outbox rows. */
    private static List<Alert> insertAlerts(Connection c, Evaluation e, List<String> channels, Instant now)
            throws SQLException {
        if (e.alerts().isEmpty()) {
            return List.of();
        }
        List<Alert> fresh = new ArrayList<>();
        for (Alert a : e.alerts()) {
            if (insertAlert(c, a, now)) {
                fresh.add(a);
                for (String channel : channels) {
                    insertOutbox(c, a.id(), channel, now);
                }
            }
        }
        return fresh;
    }

    private static List<Alert> writeEvaluation(Connection c, Evaluation e, List<String> channels, Instant now)
            throws SQLException {
        MonitorState s = e.state();
        if (!e.looks().isEmpty()) {
            insertLooks(c, e.looks(), now);
        }
        List<Alert> fresh = insertAlerts(c, e, channels, now);
        if (hasPrimaryLook(e)) {
            lockPlan(c, s.experiment(), s.cumulativeAlphaSpent(), now);
        }
        return fresh;
    }

    private static void insertLooks(Connection c, List<LookRecord> looks, Instant now) throws SQLException {
        try (PreparedStatement ps = c.prepareStatement("INSERT INTO look (experiment_id, metric, sequence, role, "
                + "look_number, decision, record_json, observed_at, evaluated_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)")) {
            for (LookRecord l : looks) {
                ps.setString(1, l.experiment());
                ps.setString(2, l.metric());
                ps.setLong(3, l.sequence());
                ps.setString(4, l.role());
                if (l.look() == null) {
                    ps.setNull(5, java.sql.Types.INTEGER);
                } else {
                    ps.setInt(5, l.look());
                }
                ps.setString(6, l.decision().wireName());
                ps.setString(7, Json.write(l));
                ps.setTimestamp(8, Timestamp.from(l.observedAt()));
                ps.setTimestamp(9, Timestamp.from(now));
                ps.addBatch();
            }
            ps.executeBatch();
        }
    }

    private static void bindState(PreparedStatement ps, MonitorState s, String status, Position position, String json,
                                  Instant now) throws SQLException {
        ps.setLong(1, s.lastSequence());
        ps.setObject(2, position.partition(), java.sql.Types.INTEGER);
        ps.setObject(3, position.offset(), java.sql.Types.BIGINT);
        ps.setString(4, status);
        ps.setString(5, json);
        ps.setTimestamp(6, Timestamp.from(now));
    }

    private static boolean insertAlert(Connection c, Alert a, Instant now) throws SQLException {
        try (PreparedStatement exists = c.prepareStatement("SELECT 1 FROM alert WHERE alert_id = ?")) {
            exists.setString(1, a.id());
            try (ResultSet rs = exists.executeQuery()) {
                if (rs.next()) {
                    return false;
                }
            }
        }
        // The check above does not see a row another transaction has inserted but not yet committed (a
        // second instance during a rebalance): then the insert waits for it and fails on the primary key.
        // PostgreSQL aborts the whole transaction on any error, so the insert runs under a savepoint and a
        // duplicate only undoes itself: the alert exists, it is not fresh, and the rest of the evaluation commits.
        Savepoint before = c.setSavepoint();
        try (PreparedStatement ps = c.prepareStatement("INSERT INTO alert (alert_id, experiment_id, kind, metric, "
                + "look_number, sequence, payload_json, created_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?)")) {
            ps.setString(1, a.id());
            ps.setString(2, a.experiment());
            ps.setString(3, a.kind().wireName());
            ps.setString(4, a.metric());
            ps.setObject(5, a.lookNumber(), java.sql.Types.INTEGER);
            ps.setLong(6, a.sequence());
            ps.setString(7, Json.write(a));
            ps.setTimestamp(8, Timestamp.from(now));
            ps.executeUpdate();
            c.releaseSavepoint(before);
            return true;
        } catch (SQLException e) {
            if (UNIQUE_VIOLATION.equals(e.getSQLState())) {
                c.rollback(before);
                return false;
            }
            throw e;
        }
    }

    /** SQLSTATE of a unique or primary-key violation, the same in H2 and PostgreSQL (SQL standard class 23). */
    private static final String UNIQUE_VIOLATION = "23505";

    private static void insertOutbox(Connection c, String alertId, String channel, Instant now) throws SQLException {
        try (PreparedStatement ps = c.prepareStatement("INSERT INTO outbox (alert_id, channel, status, attempts, "
                + "next_attempt_at) VALUES (?, ?, 'pending', 0, ?)")) {
            ps.setString(1, alertId);
            ps.setString(2, channel);
            ps.setTimestamp(3, Timestamp.from(now));
            ps.executeUpdate();
        }
    }

    private static void lockPlan(Connection c, String experimentId, double alphaSpent, Instant now) throws SQLException {
        try (PreparedStatement ps = c.prepareStatement("UPDATE plan SET locked_at = ? WHERE experiment_id = ? "
                + "AND locked_at IS NULL")) {
            ps.setTimestamp(1, Timestamp.from(now));
            ps.setString(2, experimentId);
            if (ps.executeUpdate() == 0) {
                return;
            }
        }
        try (PreparedStatement ps = c.prepareStatement("SELECT version, content_hash FROM plan WHERE experiment_id = ?")) {
            ps.setString(1, experimentId);
            try (ResultSet rs = ps.executeQuery()) {
                rs.next();
                audit(c, experimentId, now, "stopline", "locked", rs.getInt(1), rs.getString(2), alphaSpent,
                        "first look evaluated: changes now need an amendment");
            }
        }
    }

    /** Records that a record was seen again (duplicate) without changing the evaluation. */
    public void advancePosition(String experimentId, Position position, Instant now) {
        inTransaction(c -> {
            updatePositions(c, List.of(Map.entry(experimentId, position)), now);
            return null;
        });
    }

    // ------------------------------------------------------------------ looks and alerts

    public List<LookRecord> looks(String experimentId) {
        return query("SELECT record_json FROM look WHERE experiment_id = ? ORDER BY sequence, role DESC, metric",
                ps -> ps.setString(1, experimentId), rs -> Json.read(rs.getString(1), LookRecord.class));
    }

    /** The looks of one role ({@link LookRecord#PRIMARY} or {@link LookRecord#GUARDRAIL}) of an experiment, oldest first. */
    public List<LookRecord> looks(String experimentId, String role) {
        return query("SELECT record_json FROM look WHERE experiment_id = ? AND role = ? ORDER BY sequence, metric",
                ps -> {
                    ps.setString(1, experimentId);
                    ps.setString(2, role);
                }, rs -> Json.read(rs.getString(1), LookRecord.class));
    }

    /**
     * Looks of an experiment from sequence {@code fromSequence} on, oldest first, at most {@code limit}
     * sequences' worth (all looks of the last sequence included), for paging through long histories (an
     * SPRT or a guardrail stores a look per snapshot).
     */
    public List<LookRecord> looks(String experimentId, long fromSequence, int limit) {
        return query("SELECT record_json FROM look WHERE experiment_id = ? AND sequence >= ? AND sequence IN ("
                        + "SELECT DISTINCT sequence FROM look WHERE experiment_id = ? AND sequence >= ? "
                        + "ORDER BY sequence FETCH FIRST " + Math.max(1, limit) + " ROWS ONLY) "
                        + "ORDER BY sequence, role DESC, metric",
                ps -> {
                    ps.setString(1, experimentId);
                    ps.setLong(2, fromSequence);
                    ps.setString(3, experimentId);
                    ps.setLong(4, fromSequence);
                }, rs -> Json.read(rs.getString(1), LookRecord.class));
    }

    /**
     * The latest look of each metric of an experiment (primary first, then guardrails by name): what the
     * experiment lists and summaries show, without reading a history that grows by a row per snapshot.
     */
    public List<LookRecord> latestLooks(String experimentId) {
        return query("SELECT l.record_json FROM look l WHERE l.experiment_id = ? AND l.sequence = ("
                        + "SELECT MAX(m.sequence) FROM look m WHERE m.experiment_id = l.experiment_id "
                        + "AND m.metric = l.metric) ORDER BY l.role DESC, l.metric",
                ps -> ps.setString(1, experimentId), rs -> Json.read(rs.getString(1), LookRecord.class));
    }

    public record StoredAlert(Alert alert, Instant createdAt, Instant acknowledgedAt, String acknowledgedBy) {
    }

    public List<StoredAlert> alerts(String experimentIdOrNull, int limit) {
        String where = experimentIdOrNull == null ? "" : " WHERE experiment_id = ?";
        return query("SELECT payload_json, created_at, acknowledged_at, acknowledged_by FROM alert" + where
                        + " ORDER BY created_at DESC, alert_id LIMIT " + Math.max(1, Math.min(limit, 10_000)),
                ps -> {
                    if (experimentIdOrNull != null) {
                        ps.setString(1, experimentIdOrNull);
                    }
                }, rs -> new StoredAlert(Json.read(rs.getString(1), Alert.class), instant(rs, 2), instant(rs, 3),
                        rs.getString(4)));
    }

    public Optional<StoredAlert> alert(String alertId) {
        return query("SELECT payload_json, created_at, acknowledged_at, acknowledged_by FROM alert WHERE alert_id = ?",
                ps -> ps.setString(1, alertId), rs -> new StoredAlert(Json.read(rs.getString(1), Alert.class),
                        instant(rs, 2), instant(rs, 3), rs.getString(4))).stream().findFirst();
    }

    /** Acknowledges an alert; false if there is no such alert. A second acknowledgement keeps the first. */
    public boolean acknowledge(String alertId, String actor, Instant now) {
        return inTransaction(c -> {
            try (PreparedStatement ps = c.prepareStatement("UPDATE alert SET acknowledged_at = COALESCE(acknowledged_at, ?), "
                    + "acknowledged_by = COALESCE(acknowledged_by, ?) WHERE alert_id = ?")) {
                ps.setTimestamp(1, Timestamp.from(now));
                ps.setString(2, actor);
                ps.setString(3, alertId);
                return ps.executeUpdate() == 1;
            }
        });
    }

    // ------------------------------------------------------------------ webhook endpoints

    /** A webhook endpoint switched off (it answered 410 Gone), since when and why. */
    public record DisabledWebhook(String url, Instant disabledAt, String reason) {
    }

    /** Records that {@code url} is switched off; a second call keeps the first time and reason. */
    public void disableWebhook(String url, String reason, Instant now) {
        inTransaction(c -> {
            try (PreparedStatement exists = c.prepareStatement("SELECT 1 FROM webhook_disabled WHERE url = ?")) {
                exists.setString(1, url);
                try (ResultSet rs = exists.executeQuery()) {
                    if (rs.next()) {
                        return null;
                    }
                }
            }
            try (PreparedStatement ps = c.prepareStatement(
                    "INSERT INTO webhook_disabled (url, disabled_at, reason) VALUES (?, ?, ?)")) {
                ps.setString(1, url);
                ps.setTimestamp(2, Timestamp.from(now));
                ps.setString(3, reason);
                ps.executeUpdate();
            }
            return null;
        });
    }

    /** Switches {@code url} on again; false if it was not switched off. */
    public boolean enableWebhook(String url) {
        return inTransaction(c -> {
            try (PreparedStatement ps = c.prepareStatement("DELETE FROM webhook_disabled WHERE url = ?")) {
                ps.setString(1, url);
                return ps.executeUpdate() == 1;
            }
        });
    }

    /** Every switched-off endpoint, by URL. */
    public Map<String, DisabledWebhook> disabledWebhooks() {
        Map<String, DisabledWebhook> out = new java.util.TreeMap<>();
        for (DisabledWebhook d : query("SELECT url, disabled_at, reason FROM webhook_disabled", ps -> { },
                rs -> new DisabledWebhook(rs.getString(1), rs.getTimestamp(2).toInstant(), rs.getString(3)))) {
            out.put(d.url(), d);
        }
        return out;
    }

    // ------------------------------------------------------------------ outbox

    public record OutboxItem(String alertId, String channel, int attempts, Alert alert) {
    }

    /** Pending deliveries that are due, oldest first. */
    /** Due outbox rows of every channel, oldest first. */
    public List<OutboxItem> dueDeliveries(Instant now, int limit) {
        return dueDeliveries(now, limit, "");
    }

    /**
     * Due outbox rows, oldest first: those of webhook channels ({@code webhooks} true) or of all the
     * others (the alert topic, the log). Asked for separately, so that a backlog of retries for an
     * endpoint that is down never fills the round and holds back a new alert's topic and log rows.
     */
    public List<OutboxItem> dueDeliveries(Instant now, int limit, boolean webhooks) {
        return dueDeliveries(now, limit, webhooks ? "AND o.channel LIKE 'webhook:%' " : "AND o.channel NOT LIKE 'webhook:%' ");
    }

    private List<OutboxItem> dueDeliveries(Instant now, int limit, String channelCondition) {
        return query("SELECT o.alert_id, o.channel, o.attempts, a.payload_json FROM outbox o JOIN alert a "
                        + "ON a.alert_id = o.alert_id WHERE o.status = 'pending' AND o.next_attempt_at <= ? "
                        + channelCondition + "ORDER BY o.next_attempt_at, o.alert_id LIMIT " + Math.max(1, limit),
                ps -> ps.setTimestamp(1, Timestamp.from(now)),
                rs -> new OutboxItem(rs.getString(1), rs.getString(2), rs.getInt(3),
                        Json.read(rs.getString(4), Alert.class)));
    }

    /** Records an attempt: {@code status} delivered, pending (retry at {@code nextAttempt}) or abandoned. */
    public void recordAttempt(String alertId, String channel, String status, Instant nextAttempt, String error,
                              Instant now) {
        inTransaction(c -> {
            try (PreparedStatement ps = c.prepareStatement("UPDATE outbox SET status = ?, attempts = attempts + 1, "
                    + "next_attempt_at = ?, last_error = ?, delivered_at = ? WHERE alert_id = ? AND channel = ?")) {
                ps.setString(1, status);
                ps.setTimestamp(2, Timestamp.from(nextAttempt == null ? now : nextAttempt));
                ps.setString(3, error == null ? null : error.substring(0, Math.min(error.length(), 2000)));
                ps.setTimestamp(4, "delivered".equals(status) ? Timestamp.from(now) : null);
                ps.setString(5, alertId);
                ps.setString(6, channel);
                ps.executeUpdate();
            }
            return null;
        });
    }

    public record DeliveryStatus(String channel, String status, int attempts, String lastError, Instant deliveredAt) {
    }

    public List<DeliveryStatus> deliveries(String alertId) {
        return query("SELECT channel, status, attempts, last_error, delivered_at FROM outbox WHERE alert_id = ? "
                        + "ORDER BY channel", ps -> ps.setString(1, alertId),
                rs -> new DeliveryStatus(rs.getString(1), rs.getString(2), rs.getInt(3), rs.getString(4),
                        instant(rs, 5)));
    }

    /** Whether the database answers now (used to tell an outage from a statement it refuses). */
    public boolean reachable() {
        try (Connection c = ds.getConnection()) {
            return c.isValid(2);
        } catch (SQLException e) {
            return false;
        }
    }

    // ------------------------------------------------------------------ plumbing

    @FunctionalInterface
    interface Binder {
        void bind(PreparedStatement ps) throws SQLException;
    }

    @FunctionalInterface
    interface RowMapper<T> {
        T map(ResultSet rs) throws SQLException;
    }

    @FunctionalInterface
    interface Work<T> {
        T run(Connection c) throws SQLException;
    }

    private <T> List<T> query(String sql, Binder binder, RowMapper<T> mapper) {
        try (Connection c = ds.getConnection(); PreparedStatement ps = c.prepareStatement(sql)) {
            binder.bind(ps);
            List<T> out = new ArrayList<>();
            try (ResultSet rs = ps.executeQuery()) {
                while (rs.next()) {
                    out.add(mapper.map(rs));
                }
            }
            return out;
        } catch (SQLException e) {
            throw new StoreException(e);
        }
    }

    private <T> T inTransaction(Work<T> work) {
        try (Connection c = ds.getConnection()) {
            boolean auto = c.getAutoCommit();
            c.setAutoCommit(false);
            try {
                T result = work.run(c);
                c.commit();
                return result;
            } catch (SQLException | RuntimeException e) {
                c.rollback();
                throw e;
            } finally {
                c.setAutoCommit(auto);
            }
        } catch (SQLException e) {
            throw new StoreException(e);
        }
    }

    private static Instant instant(ResultSet rs, int column) throws SQLException {
        Timestamp t = rs.getTimestamp(column);
        return t == null ? null : t.toInstant();
    }

    /** The database could not be reached or refused a statement; callers retry rather than drop data. */
    public static final class StoreException extends RuntimeException {
        private static final long serialVersionUID = 1L;

        StoreException(SQLException cause) {
            super(cause.getMessage(), cause);
        }

        /**
         * Whether the failure is the database's state rather than the statement's: a lost or refused
         * connection, a server shutting down or out of resources, a read-only server (a standby during a
         * failover), a serialization failure or deadlock. Such a write is held and retried, never given up.
         * Decided from JDBC 4's exception classes and the SQLSTATE (SQL standard classes 08 and 40,
         * 25006; PostgreSQL's 53 and 57; H2's 90098 database closed and 90097 read-only).
         */
        public boolean transientFailure() {
            for (Throwable t = getCause(); t != null; t = t.getCause()) {
                if (t instanceof java.sql.SQLTransientException || t instanceof java.sql.SQLRecoverableException
                        || t instanceof java.sql.SQLNonTransientConnectionException) {
                    return true;
                }
                if (t instanceof SQLException e && transientState(e.getSQLState())) {
                    return true;
                }
            }
            return false;
        }

        static boolean transientState(String state) {
            if (state == null) {
                return false;
            }
            return state.startsWith("08") || state.startsWith("40") || state.startsWith("53") || state.startsWith("57")
                    || state.equals("25006") || state.equals("HYT00") || state.equals("90098") || state.equals("90097");
        }
    }
}
