package dev.stopline.bench;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.monitor.Alert;
import dev.stopline.monitor.AlertKind;
import dev.stopline.monitor.Evaluation;
import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.monitor.MonitorState;
import dev.stopline.plan.PlanParser;
import dev.stopline.stats.estimate.SampleRatioCheck;
import dev.stopline.wire.Snapshot;
import dev.stopline.wire.SnapshotParser;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * The load benchmark's fleet: its streams can be drawn again experiment by experiment (what the oracle
 * check relies on), every plan is one the evaluator accepts, and each scenario raises its alert where
 * it was built to, so a load run really contains crossings at known points.
 */
class LoadStreamTest {
    private static final long SEED = 20270315L;
    private static final int ROUNDS = 50;

    @Test
    void feed_drawnAgainAlone_givesTheSameSnapshots() {
        LoadStream.Feed a = LoadStream.feed(SEED, 7, ROUNDS);
        LoadStream.Feed other = LoadStream.feed(SEED, 8, ROUNDS);
        List<String> first = new ArrayList<>();
        for (int k = 0; k < ROUNDS; k++) {
            first.add(a.next());
            other.next(); // interleaved with another experiment, as the load produces them
        }
        LoadStream.Feed again = LoadStream.feed(SEED, 7, ROUNDS);
        for (int k = 0; k < ROUNDS; k++) {
            assertEquals(first.get(k), again.next(), "snapshot " + (k + 1));
        }
    }

    @Test
    void plans_everyKind_isAcceptedByTheEvaluator() {
        for (int i = 0; i < 6; i++) { // i mod 6 covers both methods with and without a guardrail
            ExperimentMonitor m = ExperimentMonitor.of(PlanParser.parseYaml(LoadStream.plan(i, ROUNDS)), 1);
            assertEquals(LoadStream.guarded(i) ? 1 : 0, m.plan().guardrails().size(), "guardrails of " + i);
        }
    }

    @Test
    void lift_groupSequential_crossesEfficacy() {
        int i = 0; // even: group-sequential; (0 / 6) mod 10 = 0: lift
        assertEquals(LoadStream.Scenario.LIFT, LoadStream.scenario(i));
        List<Alert> alerts = alerts(i);
        assertTrue(alerts.stream().anyMatch(a -> a.kind() == AlertKind.EFFICACY), "alerts " + ids(alerts));
    }

    @Test
    void sampleRatioScenario_alertsOnlyAfterTheShareChanges() {
        int mismatchFrom = ROUNDS / 2; // LoadStream: 46% to treatment from round rounds / 2
        for (int i = 6; i < 12; i++) { // (i / 6) mod 10 = 1: sample-ratio mismatch, all six plan kinds
            List<Alert> srm = alerts(i).stream().filter(a -> a.kind() == AlertKind.SAMPLE_RATIO).toList();
            assertTrue(!srm.isEmpty(), "no sample-ratio alert for " + i);
            assertTrue(srm.get(0).sequence() > mismatchFrom, "first sample-ratio alert of " + i + " at sequence "
                    + srm.get(0).sequence() + ", the shift begins at " + mismatchFrom);
        }
    }

    @Test
    void returnsHarm_guardedExperiments_alertTheGuardrailAfterTheHarmBegins() {
        int harmFrom = ROUNDS / 3; // LoadStream: treatment return rate 4% from round rounds / 3
        for (int i : new int[] {12, 15}) { // (i / 6) mod 10 = 2 and i mod 3 = 0: harm, with a guardrail
            List<Alert> alerts = alerts(i);
            List<Alert> harm = alerts.stream().filter(a -> a.kind() == AlertKind.GUARDRAIL).toList();
            assertEquals(1, harm.size(), "guardrail alerts of " + i + ": " + ids(alerts));
            assertTrue(harm.get(0).sequence() > harmFrom, "guardrail alert of " + i + " at sequence "
                    + harm.get(0).sequence() + ", the harm begins at " + harmFrom);
        }
    }

    @Test
    void noEffect_sampleRatioAlarms_stayWithinTheirFalseAlarmBound() {
        // the evaluator's rule (ExperimentMonitor: an episode begins at a snapshot that mismatches), on units only
        SampleRatioCheck check = SampleRatioCheck.withWeights(0.5, 0.5).withThreshold(0.001);
        SnapshotParser parser = SnapshotParser.withDefaults();
        int n = 0;
        int alarms = 0;
        for (int i = 0; n < 120; i++) {
            if (LoadStream.scenario(i) != LoadStream.Scenario.NO_EFFECT) {
                continue;
            }
            n++;
            LoadStream.Feed feed = LoadStream.feed(SEED, i, ROUNDS);
            boolean alarmed = false;
            for (int k = 0; k < ROUNDS; k++) {
                Snapshot s = (Snapshot) parser.parse(feed.next().getBytes(StandardCharsets.UTF_8), LoadStream.id(i));
                alarmed |= check.test(s.arms().get("control").units(), s.arms().get("treatment").units()).mismatch();
            }
            alarms += alarmed ? 1 : 0;
        }
        // Bonferroni: 50 looks x alpha 0.001 = at most 5% of experiments with a false alarm (common practice);
        // 15 is above the 99.9% quantile of binomial(120, 0.05) (Commons Math BinomialDistribution: 14).
        assertTrue(alarms <= 15, alarms + " of 120 no-effect experiments raised a sample-ratio alert");
    }

    private static List<Alert> alerts(int i) {
        ExperimentMonitor m = ExperimentMonitor.of(PlanParser.parseYaml(LoadStream.plan(i, ROUNDS)), 1);
        MonitorState s = m.initialState();
        SnapshotParser parser = SnapshotParser.withDefaults();
        LoadStream.Feed feed = LoadStream.feed(SEED, i, ROUNDS);
        List<Alert> out = new ArrayList<>();
        for (int k = 0; k < ROUNDS; k++) {
            Snapshot snap = (Snapshot) parser.parse(feed.next().getBytes(StandardCharsets.UTF_8), LoadStream.id(i));
            Evaluation e = m.evaluate(s, snap);
            s = e.state();
            out.addAll(e.alerts());
        }
        return out;
    }

    private static List<String> ids(List<Alert> alerts) {
        return alerts.stream().map(Alert::id).toList();
    }
}
