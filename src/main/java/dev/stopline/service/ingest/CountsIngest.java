package dev.stopline.service.ingest;

import dev.stopline.monitor.Alert;
import dev.stopline.monitor.Decision;
import dev.stopline.monitor.LookRecord;
import dev.stopline.monitor.MonitorState;
import dev.stopline.monitor.Monitoring;
import dev.stopline.service.alert.AlertDispatcher;
import dev.stopline.service.plans.PlanRegistry;
import dev.stopline.service.store.Store;
import dev.stopline.service.support.StoplineMetrics;
import dev.stopline.wire.SnapshotParser;
import jakarta.annotation.PreDestroy;
import jakarta.enterprise.context.ApplicationScoped;
import jakarta.inject.Inject;
import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import java.util.List;
import java.util.Map;
import java.util.ArrayList;
import java.util.Optional;
import java.util.concurrent.CompletableFuture;
import java.util.concurrent.CompletionException;
import java.util.concurrent.ConcurrentHashMap;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.atomic.AtomicInteger;
import java.util.concurrent.atomic.AtomicLong;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.eclipse.microprofile.config.inject.ConfigProperty;
import org.jboss.logging.Logger;

/**
 * What happens to one record of the counts topic: the pure {@link Monitoring} pipeline decides,
 * this class makes the decision durable (database transaction, dead-letter topic), counts it and
 * wakes the alert dispatcher.
 *
 * <p>Exactly-once effect on top of at-least-once delivery: each experiment's stored state remembers
 * the partition and offset it was last advanced from; a record at or below that offset (a redelivery
 * after a crash or a rebalance) is acknowledged without any effect. The database write and the state
 * change are one transaction, so there is no window in which a look is stored but the state is not.
 *
 * <p>When the database is unavailable or refuses writes the consumer does not drop anything: the
 * record is retried with capped backoff, which holds the partition until the database is back.
 */
@ApplicationScoped
public class CountsIngest {
    private static final Logger LOG = Logger.getLogger(CountsIngest.class);
    private static final Duration MAX_BACKOFF = Duration.ofSeconds(5);
    /** Upper bound of {@code stopline.ingest.lanes}. */
    static final int MAX_LANES = 16;
    /** Polls smaller than this are evaluated on one thread: handing out lanes would cost more than it saves. */
    static final int PARALLEL_FROM = 256;
    /** Attempts of a record whose write fails for no reason the database gives, while it answers. */
    static final int ATTEMPTS_BEFORE_QUARANTINE = 3;

    private final Store store;
    private final PlanRegistry plans;
    private final DeadLetterPublisher deadLetters;
    private final AlertDispatcher dispatcher;
    private final StoplineMetrics metrics;
    private final Clock clock;
    private final Monitoring monitoring;
    private final Map<String, Store.StoredState> cache = new ConcurrentHashMap<>();
    /** Threads that evaluate a poll's records besides the consumer's worker, one lane each; none when 1 lane. */
    private final ExecutorService lanePool;
    private final int lanes;
    private final AtomicLong parallelPolls = new AtomicLong();

    @Inject
    public CountsIngest(Store store, PlanRegistry plans, DeadLetterPublisher deadLetters, AlertDispatcher dispatcher,
                        StoplineMetrics metrics, Clock clock,
                        @ConfigProperty(name = "stopline.counts.max-bytes", defaultValue = "1048576") int maxBytes,
                        @ConfigProperty(name = "stopline.ingest.lanes") Optional<Integer> lanes) {
        this.store = store;
        this.plans = plans;
        this.deadLetters = deadLetters;
        this.dispatcher = dispatcher;
        this.metrics = metrics;
        this.clock = clock;
        this.monitoring = new Monitoring(SnapshotParser.withDefaults().withMaxBytes(maxBytes), plans::monitor);
        this.lanes = Math.max(1, Math.min(MAX_LANES, lanes.orElse(Runtime.getRuntime().availableProcessors())));
        AtomicInteger n = new AtomicInteger();
        this.lanePool = this.lanes == 1 ? null : Executors.newFixedThreadPool(this.lanes - 1, r -> {
            Thread t = new Thread(r, "stopline-ingest-lane-" + n.incrementAndGet());
            t.setDaemon(true);
            return t;
        });
    }

    @PreDestroy
    void stopLanes() {
        if (lanePool != null) {
            lanePool.shutdownNow();
        }
    }

    /**
     * Handles one record; returns only when its effect is durable. A database failure holds the record
     * (and so the partition) and retries with capped backoff, for as long as it takes, when the database
     * is down or says the failure is its state (read-only, connection, shutdown; see
     * {@link Store.StoreException#transientFailure}). A failure the database does not explain, while it
     * answers, is retried {@value #ATTEMPTS_BEFORE_QUARANTINE} times in all before the record is
     * quarantined: a valid snapshot must not be dead-lettered because of a moment's race with a restart.
     */
    public void accept(ConsumerRecord<String, byte[]> record) {
        plans.awaitLoaded();
        long backoff = 100;
        int unexplained = 0;
        while (true) {
            try {
                handle(record);
                return;
            } catch (Store.StoreException e) {
                cache.clear();
                boolean hold = e.transientFailure() || !store.reachable();
                if (!hold && ++unexplained >= ATTEMPTS_BEFORE_QUARANTINE) {
                    quarantine(record, e);
                    return;
                }
                if (hold) {
                    LOG.warnf("database unavailable (%s); holding %s-%d@%d and retrying in %d ms", e.getMessage(),
                            record.topic(), record.partition(), record.offset(), backoff);
                } else {
                    LOG.warnf("database write failed for a reason it does not name (%s), attempt %d of %d; "
                                    + "holding %s-%d@%d and retrying in %d ms", e.getMessage(), unexplained,
                            ATTEMPTS_BEFORE_QUARANTINE, record.topic(), record.partition(), record.offset(), backoff);
                }
                sleep(backoff);
                backoff = Math.min(MAX_BACKOFF.toMillis(), backoff * 2);
            } catch (RuntimeException e) {
                quarantine(record, e);
                return;
            }
        }
    }

    /**
     * Handles the records of one poll; returns only when all their effects are durable. The effects go
     * to the database in one transaction ({@link Store#commitBatch}), which writes each experiment's state
     * once however many of its snapshots the poll held; dead letters, metrics and alert wake-ups follow
     * the commit. If anything fails before the commit (an evaluator defect, a database error) nothing of
     * the batch has happened, and the records are handled again one by one by {@link #accept}, which
     * knows how to quarantine a record and how to wait for the database.
     */
    public void acceptAll(List<ConsumerRecord<String, byte[]>> records) {
        plans.awaitLoaded();
        if (records.size() == 1) {
            accept(records.get(0));
            return;
        }
        Batch batch;
        try {
            batch = evaluate(records);
            batch.fresh = store.commitBatch(batch.changes, dispatcher.channels(), clock.instant());
        } catch (RuntimeException e) {
            cache.clear();
            LOG.debugf("batch of %d records failed (%s); handling them one by one", records.size(), e.getMessage());
            for (ConsumerRecord<String, byte[]> r : records) {
                accept(r);
            }
            return;
        }
        cache.putAll(batch.states);
        batch.afterCommit.forEach(Runnable::run);
        for (Alert a : batch.fresh) {
            metrics.alert(a.kind().wireName());
            LOG.debugf("alert raised: %s", a.summary());
        }
        if (!batch.fresh.isEmpty()) {
            dispatcher.wake(batch.fresh);
        }
    }

    /** What a poll's records decided, not yet durable. */
    private static final class Batch {
        final Map<String, Store.StoredState> states = new java.util.HashMap<>();
        final List<Store.Change> changes = new java.util.ArrayList<>();
        final List<Runnable> afterCommit = new java.util.ArrayList<>();
        List<Alert> fresh = List.of();
    }

    /**
     * Evaluates a poll's records. Records are spread over {@link #lanes} lanes by their key (the
     * experiment id), so each experiment's records stay in one lane and in order, and lanes never touch
     * the same experiment's state; the consumer's worker thread takes the first lane itself. The monitors
     * and the statistics core are immutable and pure, the state cache is concurrent. A record without a
     * key could carry any experiment, so a poll holding one is evaluated on one thread.
     */
    private Batch evaluate(List<ConsumerRecord<String, byte[]>> records) {
        if (lanePool == null || records.size() < PARALLEL_FROM || records.stream().anyMatch(r -> r.key() == null)) {
            return evaluateLane(records);
        }
        List<List<ConsumerRecord<String, byte[]>>> split = new ArrayList<>(lanes);
        for (int i = 0; i < lanes; i++) {
            split.add(new ArrayList<>(records.size() / lanes + 16));
        }
        for (ConsumerRecord<String, byte[]> r : records) {
            split.get(Math.floorMod(r.key().hashCode(), lanes)).add(r);
        }
        parallelPolls.incrementAndGet();
        List<CompletableFuture<Batch>> others = new ArrayList<>(lanes - 1);
        for (int i = 1; i < lanes; i++) {
            List<ConsumerRecord<String, byte[]>> lane = split.get(i);
            others.add(CompletableFuture.supplyAsync(() -> evaluateLane(lane), lanePool));
        }
        Batch merged = null;
        RuntimeException failed = null;
        try {
            merged = evaluateLane(split.get(0));
        } catch (RuntimeException e) {
            failed = e;
        }
        for (CompletableFuture<Batch> f : others) {      // every lane has finished before anything else happens
            try {
                Batch b = f.join();
                if (merged != null) {
                    merged.states.putAll(b.states);
                    merged.changes.addAll(b.changes);
                    merged.afterCommit.addAll(b.afterCommit);
                }
            } catch (CompletionException e) {
                if (failed == null) {
                    failed = e.getCause() instanceof RuntimeException re ? re : e;
                }
            }
        }
        if (failed != null) {
            throw failed;
        }
        return merged;
    }

    private Batch evaluateLane(List<ConsumerRecord<String, byte[]>> records) {
        Batch b = new Batch();
        Instant now = clock.instant();
        for (ConsumerRecord<String, byte[]> record : records) {
            String key = record.key();
            Store.StoredState stored = key == null ? null : current(key, b.states);
            if (stored != null && stored.position().covers(record.partition(), record.offset())) {
                b.afterCommit.add(() -> metrics.snapshot("redelivered"));
                continue;
            }
            long started = System.nanoTime();
            Monitoring.Step step = monitoring.process(record.value(), key, id -> {
                Store.StoredState s = current(id, b.states);
                return s == null ? null : s.state();
            });
            Store.Position position = new Store.Position(record.partition(), record.offset());
            if (step instanceof Monitoring.Rejected r) {
                b.afterCommit.add(() -> {
                    deadLetters.publish(record, r.rejection().reason().code(), r.rejection().detail());
                    metrics.deadLetter(r.rejection().reason().code());
                });
            } else if (step instanceof Monitoring.Duplicate d) {
                String id = d.snapshot().experiment();
                b.changes.add(Store.Change.positionOnly(id, position));
                Store.StoredState s = current(id, b.states);
                if (s != null) {
                    b.states.put(id, new Store.StoredState(s.state(), position, s.status(), now));
                }
                b.afterCommit.add(() -> metrics.snapshot("duplicate"));
            } else if (step instanceof Monitoring.Evaluated e) {
                MonitorState next = e.evaluation().state();
                String status = status(next, e.evaluation().looks());
                b.changes.add(Store.Change.evaluated(e.evaluation(), status, position));
                b.states.put(next.experiment(), new Store.StoredState(next, position, status, now));
                long nanos = System.nanoTime() - started;
                b.afterCommit.add(() -> metrics.evaluated(e, nanos));
            }
        }
        return b;
    }

    /** The state as this batch has left it so far, else as stored. */
    private Store.StoredState current(String experiment, Map<String, Store.StoredState> batch) {
        Store.StoredState s = batch.get(experiment);
        return s != null ? s : stored(experiment);
    }

    /**
     * A record that valid-looking input made the evaluator or the database refuse (a defect, not bad
     * input we know how to name): dead-lettered with reason {@code evaluation-error} so that the
     * consumer keeps going and nothing is lost.
     */
    private void quarantine(ConsumerRecord<String, byte[]> record, RuntimeException e) {
        LOG.errorf(e, "could not evaluate %s-%d@%d; dead-lettered as evaluation-error", record.topic(),
                record.partition(), record.offset());
        deadLetters.publish(record, "evaluation-error", String.valueOf(e.getMessage()));
        metrics.deadLetter("evaluation-error");
    }

    private void handle(ConsumerRecord<String, byte[]> record) {
        String key = record.key();
        Store.StoredState stored = key == null ? null : stored(key);
        if (stored != null && stored.position().covers(record.partition(), record.offset())) {
            metrics.snapshot("redelivered");
            return;
        }
        long started = System.nanoTime();
        Monitoring.Step step = monitoring.process(record.value(), key, id -> {
            Store.StoredState s = stored(id);
            return s == null ? null : s.state();
        });
        Store.Position position = new Store.Position(record.partition(), record.offset());
        if (step instanceof Monitoring.Rejected r) {
            deadLetters.publish(record, r.rejection().reason().code(), r.rejection().detail());
            metrics.deadLetter(r.rejection().reason().code());
            LOG.debugf("dead-lettered %s-%d@%d: %s: %s", record.topic(), record.partition(), record.offset(),
                    r.rejection().reason().code(), r.rejection().detail());
        } else if (step instanceof Monitoring.Duplicate d) {
            metrics.snapshot("duplicate");
            store.advancePosition(d.snapshot().experiment(), position, clock.instant());
            Store.StoredState s = cache.get(d.snapshot().experiment());
            if (s != null) {
                cache.put(d.snapshot().experiment(), new Store.StoredState(s.state(), position, s.status(),
                        clock.instant()));
            }
        } else if (step instanceof Monitoring.Evaluated e) {
            MonitorState next = e.evaluation().state();
            String status = status(next, e.evaluation().looks());
            List<Alert> fresh = store.commitEvaluation(e.evaluation(), status, position, dispatcher.channels(),
                    clock.instant());
            cache.put(next.experiment(), new Store.StoredState(next, position, status, clock.instant()));
            metrics.evaluated(e, System.nanoTime() - started);
            for (Alert a : fresh) {
                metrics.alert(a.kind().wireName());
                LOG.debugf("alert raised: %s", a.summary());
            }
            if (!fresh.isEmpty()) {
                dispatcher.wake(fresh);
            }
        }
    }

    private Store.StoredState stored(String experiment) {
        Store.StoredState s = cache.get(experiment);
        if (s == null) {
            s = store.state(experiment).orElse(null);
            if (s != null) {
                cache.put(experiment, s);
            }
        }
        return s;
    }

    /** The experiment's status for lists and the status page. */
    static String status(MonitorState s, List<LookRecord> looks) {
        if (s.primaryDecision() != null) {
            return s.primaryDecision().wireName();
        }
        for (MonitorState.MixtureMemo guardrail : s.guardrails().values()) {   // per snapshot: no stream
            if (guardrail.alerted()) {
                return Decision.GUARDRAIL_HARM.wireName();
            }
        }
        return s.sampleRatioMismatch() ? Decision.SAMPLE_RATIO_MISMATCH.wireName() : "running";
    }

    /** How many polls were evaluated on more than one lane so far (for tests). */
    long parallelPolls() {
        return parallelPolls.get();
    }

    /** Forgets cached states (after a partition is revoked, another instance may advance them). */
    public void forget() {
        cache.clear();
    }

    private static void sleep(long millis) {
        try {
            Thread.sleep(millis);
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            throw new IllegalStateException("interrupted while waiting for the database", e);
        }
    }
}
