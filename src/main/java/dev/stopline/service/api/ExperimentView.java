package dev.stopline.service.api;

import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.monitor.LookRecord;
import dev.stopline.monitor.MonitorState;
import dev.stopline.monitor.PlanSizing;
import dev.stopline.service.store.Store;
import dev.stopline.stats.groupseq.LookBoundary;
import dev.stopline.wire.Snapshot;
import java.time.Instant;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * What the API and the status page say about one experiment, assembled from the stored plan, state,
 * looks and alerts. Plain records: Jackson writes them as they are.
 */
public final class ExperimentView {
    private ExperimentView() {
    }

    public record Summary(String experiment, String status, int planVersion, boolean locked, String method,
                          String metric, long snapshots, Long lastSequence, Instant lastObservedAt,
                          Double informationFraction, Integer looksTaken, Integer plannedLooks,
                          Double cumulativeAlphaSpent, String latestDecision, long openAlerts, Instant updatedAt) {
    }

    public record Detail(Summary summary, Object plan, String planSource, long maxUnitsPerArm,
                         List<BoundaryPoint> plannedBoundaries, Map<String, LookRecord> latest,
                         Map<String, Long> units) {
    }

    public record BoundaryPoint(int look, double informationFraction, double efficacyZ, Double futilityZ,
                                double cumulativeAlphaSpent) {
    }

    public static Summary summary(Store.StoredPlan plan, ExperimentMonitor monitor, Store.StoredState stored,
                           List<LookRecord> looks, long openAlerts) {
        MonitorState s = stored == null ? null : stored.state();
        Snapshot last = s == null ? null : s.lastSnapshot();
        Double fraction = null;
        if (last != null && monitor != null) {
            String control = monitor.plan().control();
            String treatment = monitor.plan().arms().stream().filter(a -> !a.equals(control)).findFirst().orElseThrow();
            fraction = monitor.sizing().informationFraction(last.arms().get(control).units(),
                    last.arms().get(treatment).units());
        }
        String latest = null;
        for (LookRecord l : looks) {
            if (LookRecord.PRIMARY.equals(l.role())) {
                latest = l.decision().wireName();
            }
        }
        boolean groupSequential = monitor != null && monitor.plannedBoundaries() != null;
        return new Summary(plan.experimentId(), stored == null ? "waiting" : stored.status(), plan.version(),
                plan.locked(), monitor == null ? null : monitor.plan().primary().method().key(),
                monitor == null ? null : monitor.plan().primary().metric(), s == null ? 0 : s.snapshots(),
                last == null ? null : last.sequence(), last == null ? null : last.observedAt(), fraction,
                groupSequential ? (s == null ? 0 : s.looksTaken()) : null,
                groupSequential ? monitor.plannedBoundaries().looks().size() : null,
                groupSequential && s != null ? s.cumulativeAlphaSpent() : null, latest, openAlerts,
                stored == null ? null : stored.updatedAt());
    }

    public static Detail detail(Summary summary, Store.StoredPlan plan, ExperimentMonitor monitor, Store.StoredState stored,
                         List<LookRecord> looks) {
        List<BoundaryPoint> points = new ArrayList<>();
        if (monitor != null && monitor.plannedBoundaries() != null) {
            for (LookBoundary b : monitor.plannedBoundaries().looks()) {
                points.add(new BoundaryPoint(b.look(), b.informationFraction(), b.efficacyZ(),
                        Double.isNaN(b.futilityZ()) ? null : b.futilityZ(), b.cumulativeAlphaSpent()));
            }
        }
        Map<String, LookRecord> latest = new LinkedHashMap<>();
        for (LookRecord l : looks) {
            latest.put(l.metric(), l);
        }
        Map<String, Long> units = new LinkedHashMap<>();
        if (stored != null && stored.state().lastSnapshot() != null) {
            stored.state().lastSnapshot().arms().forEach((arm, c) -> units.put(arm, c.units()));
        }
        PlanSizing sizing = monitor == null ? null : monitor.sizing();
        return new Detail(summary, dev.stopline.service.store.Json.read(plan.planJson(), Object.class),
                plan.source(), sizing == null ? 0 : sizing.maxUnitsPerArm(), points, latest, units);
    }
}
