package dev.stopline.service.plans;

import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.plan.Plan;
import dev.stopline.plan.PlanCanonical;
import dev.stopline.plan.PlanException;
import dev.stopline.plan.PlanParser;
import dev.stopline.plan.PlanProblem;
import dev.stopline.plan.Primary;
import dev.stopline.service.store.Store;
import dev.stopline.stats.StatsException;
import io.quarkus.runtime.StartupEvent;
import jakarta.enterprise.context.ApplicationScoped;
import jakarta.enterprise.event.Observes;
import jakarta.inject.Inject;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Clock;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.Objects;
import java.util.Optional;
import java.util.concurrent.ConcurrentHashMap;
import java.util.concurrent.CountDownLatch;
import java.util.concurrent.TimeUnit;
import java.util.stream.Stream;
import org.eclipse.microprofile.config.inject.ConfigProperty;
import org.jboss.logging.Logger;

/**
 * The registered stopping plans and their monitors.
 *
 * <p>Rules: a plan may be replaced freely until its first look has been evaluated; then it is locked
 * and only an amendment changes it. An amendment keeps the alpha already spent, so it may not change
 * what that spending was computed from (metric, type, method, alpha, sides, spending or boundary,
 * arms and allocation); it may change the maximum size, later looks, futility, guardrails and the
 * sample-ratio threshold. Every change is recorded in the append-only audit trail.
 */
@ApplicationScoped
public class PlanRegistry {
    private static final Logger LOG = Logger.getLogger(PlanRegistry.class);

    private final Store store;
    private final Clock clock;
    private final Path plansDir;
    private final Map<String, ExperimentMonitor> monitors = new ConcurrentHashMap<>();
    /** Open once the stored plans and the plans directory are loaded: ingest waits for it. */
    private final CountDownLatch loaded = new CountDownLatch(1);

    @Inject
    public PlanRegistry(Store store, Clock clock,
                        @ConfigProperty(name = "stopline.plans-dir", defaultValue = "config/plans") Path plansDir) {
        this.store = store;
        this.clock = clock;
        this.plansDir = plansDir;
    }

    /** Registers the plan files of the plans directory, then builds the monitors of every stored plan. */
    void onStart(@Observes StartupEvent ev) {
        try {
            loadDirectory();
            for (Store.StoredPlan p : store.plans()) {
                ExperimentMonitor m = monitors.get(p.experimentId());
                if (m == null || m.planVersion() != p.version()) {
                    monitors.put(p.experimentId(), ExperimentMonitor.of(PlanParser.parseJson(p.planJson()), p.version()));
                }
            }
            LOG.infof("%d stopping plans active", monitors.size());
        } finally {
            loaded.countDown();
        }
    }

    /**
     * Blocks until the plans are loaded at start. The Kafka consumer may start polling before that; a
     * snapshot evaluated earlier would find no plan and be dead-lettered as an unknown experiment.
     */
    public void awaitLoaded() {
        try {
            while (!loaded.await(10, TimeUnit.SECONDS)) {
                LOG.info("ingest waits for the stopping plans to be loaded");
            }
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            throw new IllegalStateException("interrupted while waiting for the plans to be loaded", e);
        }
    }

    private void loadDirectory() {
        if (!Files.isDirectory(plansDir)) {
            LOG.infof("no plans directory %s; plans can be registered with POST /api/plans", plansDir);
            return;
        }
        try (Stream<Path> files = Files.list(plansDir)) {
            for (Path f : files.filter(f -> f.toString().endsWith(".yaml") || f.toString().endsWith(".yml")
                    || f.toString().endsWith(".json")).sorted().toList()) {
                try {
                    Result r = register(Files.readAllBytes(f), PlanParser.Format.AUTO, "file:" + f.getFileName());
                    if (r.outcome() == Outcome.LOCKED) {
                        LOG.warnf("%s differs from the locked plan of %s and was not applied: %s", f, r.experiment(),
                                r.message());
                    }
                } catch (PlanException e) {
                    LOG.errorf("%s is not a valid plan and was skipped: %s", f, e.getMessage());
                }
            }
        } catch (IOException e) {
            LOG.errorf("cannot read plans directory %s: %s", plansDir, e.getMessage());
        }
    }

    /** What became of a submitted plan. */
    public enum Outcome { CREATED, REPLACED, UNCHANGED, LOCKED, AMENDED }

    public record Result(Outcome outcome, String experiment, int version, String message) {
    }

    /**
     * Registers or replaces a plan.
     *
     * @throws PlanException with every problem, when the document is not a valid plan
     */
    public synchronized Result register(byte[] document, PlanParser.Format format, String actor) {
        ExperimentMonitor checked = parse(document, format);
        Plan plan = checked.plan();
        String hash = PlanCanonical.sha256(plan);
        Optional<Store.StoredPlan> old = store.plan(plan.experiment());
        if (old.isPresent() && old.get().contentHash().equals(hash)) {
            monitors.putIfAbsent(plan.experiment(), checked.atVersion(old.get().version()));
            return new Result(Outcome.UNCHANGED, plan.experiment(), old.get().version(), "same plan already registered");
        }
        if (old.isPresent() && old.get().locked()) {
            return new Result(Outcome.LOCKED, plan.experiment(), old.get().version(),
                    "plan of " + plan.experiment() + " is locked since its first look at " + old.get().lockedAt()
                            + "; submit the change as an amendment (POST /api/experiments/" + plan.experiment()
                            + "/amendments), which keeps the alpha already spent");
        }
        int version = store.savePlan(plan.experiment(), PlanCanonical.toJson(plan), source(document), hash, actor,
                old.isPresent() ? "replaced" : "registered", null, null, clock.instant());
        monitors.put(plan.experiment(), checked.atVersion(version));
        return new Result(old.isPresent() ? Outcome.REPLACED : Outcome.CREATED, plan.experiment(), version,
                old.isPresent() ? "plan replaced (not locked yet)" : "plan registered");
    }

    /**
     * Amends a locked plan.
     *
     * @throws PlanException when the document is invalid or changes what the alpha spent depends on
     */
    public synchronized Result amend(String experiment, byte[] document, PlanParser.Format format, String actor,
                                     String reason) {
        ExperimentMonitor checked = parse(document, format);
        Plan plan = checked.plan();
        List<PlanProblem> problems = new ArrayList<>();
        if (!plan.experiment().equals(experiment)) {
            problems.add(new PlanProblem("experiment", "amendment is for " + experiment + ", document names "
                    + plan.experiment()));
        }
        Store.StoredPlan old = store.plan(experiment).orElse(null);
        if (old == null) {
            problems.add(new PlanProblem("experiment", "no plan is registered for " + experiment));
            throw new PlanException(problems);
        }
        if (reason == null || reason.isBlank()) {
            problems.add(new PlanProblem("reason", "an amendment needs a reason (query parameter reason)"));
        }
        Plan before = PlanParser.parseJson(old.planJson());
        problems.addAll(frozenChanges(before, plan));
        if (!problems.isEmpty()) {
            throw new PlanException(problems);
        }
        if (!old.locked()) {
            return register(document, format, actor);
        }
        double spent = store.state(experiment).map(s -> s.state().cumulativeAlphaSpent()).orElse(0.0);
        String hash = PlanCanonical.sha256(plan);
        int version = store.savePlan(experiment, PlanCanonical.toJson(plan), source(document), hash, actor, "amended",
                spent, reason, clock.instant());
        monitors.put(experiment, checked.atVersion(version));
        return new Result(Outcome.AMENDED, experiment, version, "amendment recorded; alpha already spent "
                + spent + " is kept");
    }

    /** The parts of a primary that the alpha already spent was computed from. */
    static List<PlanProblem> frozenChanges(Plan before, Plan after) {
        List<PlanProblem> out = new ArrayList<>();
        Primary a = before.primary();
        Primary b = after.primary();
        frozen(out, "primary.metric", a.metric(), b.metric());
        frozen(out, "primary.type", a.type(), b.type());
        frozen(out, "primary.method", a.method(), b.method());
        frozen(out, "primary.alpha", a.alpha(), b.alpha());
        frozen(out, "primary.sides", a.sides(), b.sides());
        frozen(out, "primary.spending", a.spending(), b.spending());
        frozen(out, "primary.boundary", a.boundary(), b.boundary());
        frozen(out, "allocation", before.allocation(), after.allocation());
        frozen(out, "control", before.control(), after.control());
        return out;
    }

    private static void frozen(List<PlanProblem> out, String path, Object before, Object after) {
        if (!Objects.equals(before, after)) {
            out.add(new PlanProblem(path, "cannot change after the first look (was " + before + ", amendment has "
                    + after + "): the alpha already spent was computed from it"));
        }
    }

    /** The plan as a monitor (version 0): the engine must accept it too (sizing, boundaries). */
    private static ExperimentMonitor parse(byte[] document, PlanParser.Format format) {
        try {
            return ExperimentMonitor.of(PlanParser.parse(document, format), 0);
        } catch (StatsException e) {
            throw new PlanException(List.of(new PlanProblem("primary", e.getMessage())));
        }
    }

    private static String source(byte[] document) {
        return new String(document, StandardCharsets.UTF_8);
    }

    /** The monitor of an experiment, or null when none is registered. */
    public ExperimentMonitor monitor(String experiment) {
        return monitors.get(experiment);
    }

    public Map<String, ExperimentMonitor> monitors() {
        return Map.copyOf(monitors);
    }
}
