package dev.stopline.wire;

import static dev.stopline.wire.Records.bytes;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertInstanceOf;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Set;
import org.junit.jupiter.api.Test;

class SnapshotSequencerTest {
    /** checkout-redesign: two arms; primary orders, guardrail page_load_ms, ratio basket_value. */
    static final PlanShape CHECKOUT = new PlanShape(Set.of("control", "treatment"),
            Set.of("orders", "page_load_ms", "basket_value"));

    private static Snapshot snap(long sequence, long units, double orders) {
        return (Snapshot) SnapshotParser.withDefaults().parse(bytes(Records.withRatio(sequence, units, orders)));
    }

    private static Rejection rejected(Outcome o, Reason reason) {
        Rejection r = assertInstanceOf(Rejection.class, o);
        assertEquals(reason, r.reason(), r::toString);
        return r;
    }

    @Test
    void firstSnapshot_matchingThePlan_isAccepted() {
        Snapshot s = snap(1, 10000, 800);
        assertSame(s, SnapshotSequencer.check(s, null, CHECKOUT));
    }

    @Test
    void laterSnapshot_withGrownCounts_isAccepted() {
        Snapshot next = snap(2, 10500, 840);
        assertSame(next, SnapshotSequencer.check(next, snap(1, 10000, 800), CHECKOUT));
    }

    @Test
    void sameSequence_isDuplicate_andNotDeadLettered() {
        Rejection r = rejected(SnapshotSequencer.check(snap(5, 10000, 800), snap(5, 10000, 800), CHECKOUT), Reason.DUPLICATE);
        assertEquals("sequence 5 was already accepted", r.detail());
        assertFalse(r.reason().deadLetter());
        Rejection changed = rejected(SnapshotSequencer.check(snap(5, 10001, 800), snap(5, 10000, 800), CHECKOUT), Reason.DUPLICATE);
        assertEquals("sequence 5 was already accepted with different counts; the first one is kept", changed.detail());
    }

    @Test
    void lowerSequence_isOutOfOrder() {
        Rejection r = rejected(SnapshotSequencer.check(snap(4, 10500, 840), snap(5, 10000, 800), CHECKOUT), Reason.OUT_OF_ORDER);
        assertEquals("sequence 4 is below the last accepted 5", r.detail());
        assertTrue(r.reason().deadLetter());
    }

    @Test
    void fewerUnits_isDecreasingCount() {
        Rejection r = rejected(SnapshotSequencer.check(snap(6, 9999, 800), snap(5, 10000, 800), CHECKOUT), Reason.DECREASING_COUNT);
        assertEquals("/arms/control/units: 9999 is below 10000 in sequence 5; counts are cumulative", r.detail());
    }

    @Test
    void smallerSum_isDecreasingCount() {
        Rejection r = rejected(SnapshotSequencer.check(snap(6, 10000, 799), snap(5, 10000, 800), CHECKOUT), Reason.DECREASING_COUNT);
        assertEquals("/arms/control/metrics/orders/sum: 799 is below 800 in sequence 5; counts are cumulative", r.detail());
    }

    @Test
    void sumRecomputedInAnotherOrder_withinSlack_isNotADecrease() {
        Snapshot before = snap(5, 10000, 800);
        String jittered = Records.withRatio(6, 10000, 800).replace("\"sum\":25200.0", "\"sum\":25199.99999999"); // 4e-13 relative
        Snapshot next = (Snapshot) SnapshotParser.withDefaults().parse(bytes(jittered));
        assertEquals(25199.99999999, next.arms().get("control").metrics().get("basket_value").sum());
        assertSame(next, SnapshotSequencer.check(next, before, CHECKOUT));
    }

    @Test
    void experimentWithoutPlan_isUnknownExperiment() {
        Rejection r = rejected(SnapshotSequencer.check(snap(1, 10000, 800), null, null), Reason.UNKNOWN_EXPERIMENT);
        assertEquals("no stopping plan is loaded for experiment \"checkout-redesign\"", r.detail());
    }

    @Test
    void armOutsideThePlan_isUnknownArm() {
        PlanShape oneArm = new PlanShape(Set.of("control"), CHECKOUT.metrics());
        rejected(SnapshotSequencer.check(snap(1, 10000, 800), null, oneArm), Reason.UNKNOWN_ARM);
    }

    @Test
    void planArmAbsent_isMissingArm() {
        PlanShape threeArms = new PlanShape(Set.of("control", "treatment", "treatment-b"), CHECKOUT.metrics());
        Rejection r = rejected(SnapshotSequencer.check(snap(1, 10000, 800), null, threeArms), Reason.MISSING_ARM);
        assertEquals("/arms/treatment-b: arm of the plan is missing", r.detail());
    }

    @Test
    void metricOutsideThePlan_isUnknownMetric() {
        PlanShape fewer = new PlanShape(CHECKOUT.arms(), Set.of("orders", "page_load_ms"));
        Rejection r = rejected(SnapshotSequencer.check(snap(1, 10000, 800), null, fewer), Reason.UNKNOWN_METRIC);
        assertTrue(r.detail().startsWith("/arms/control/metrics/basket_value: not a metric of the plan"), r.detail());
    }

    @Test
    void planMetricAbsent_isMissingMetric() {
        PlanShape more = new PlanShape(CHECKOUT.arms(), Set.of("orders", "page_load_ms", "basket_value", "error_rate"));
        Rejection r = rejected(SnapshotSequencer.check(snap(1, 10000, 800), null, more), Reason.MISSING_METRIC);
        assertEquals("/arms/control/metrics/error_rate: metric of the plan is missing", r.detail());
    }

    @Test
    void previousOfAnotherExperiment_isACallerBug() {
        Snapshot other = (Snapshot) SnapshotParser.withDefaults().parse(bytes(SnapshotParserTest.bigRecord(2, 2)));
        assertThrows(IllegalArgumentException.class, () -> SnapshotSequencer.check(snap(1, 10000, 800), other, CHECKOUT));
    }

    @Test
    void reasonCodes_areStableLowerCase() {
        // the codes are a public contract (dead-letter header, metric label): listed here so a rename fails a test
        assertEquals("malformed-json schema key-mismatch invalid-value too-large duplicate out-of-order decreasing-count "
                        + "unknown-experiment unknown-arm missing-arm unknown-metric missing-metric",
                String.join(" ", java.util.Arrays.stream(Reason.values()).map(Reason::code).toList()));
    }
}
