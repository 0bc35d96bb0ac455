package dev.stopline.testing;

import dev.stopline.monitor.Alert;
import dev.stopline.monitor.Evaluation;
import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.monitor.LookRecord;
import dev.stopline.monitor.MonitorState;
import dev.stopline.plan.PlanParser;
import dev.stopline.wire.Snapshot;
import dev.stopline.wire.SnapshotParser;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;

/**
 * What the pure evaluator says about a stream, evaluated in one go in the test JVM: the reference the
 * process tests hold a restarted, killed or rebalanced daemon to.
 *
 * @param primaryLookSequences sequences of the primary looks, in order
 * @param alertIds             ids of the alerts raised, in order
 */
public record Oracle(List<Long> primaryLookSequences, List<String> alertIds) {
    public static Oracle of(String planYaml, String experiment, List<String> snapshots) {
        ExperimentMonitor m = ExperimentMonitor.of(PlanParser.parseYaml(planYaml), 1);
        MonitorState s = m.initialState();
        List<Long> looks = new ArrayList<>();
        List<String> alerts = new ArrayList<>();
        SnapshotParser parser = SnapshotParser.withDefaults();
        for (String line : snapshots) {
            Snapshot snap = (Snapshot) parser.parse(line.getBytes(StandardCharsets.UTF_8), experiment);
            Evaluation e = m.evaluate(s, snap);
            s = e.state();
            e.looks().stream().filter(l -> LookRecord.PRIMARY.equals(l.role())).forEach(l -> looks.add(l.sequence()));
            e.alerts().stream().map(Alert::id).forEach(alerts::add);
        }
        return new Oracle(List.copyOf(looks), List.copyOf(alerts));
    }
}
