package dev.stopline.wire;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertInstanceOf;

import dev.stopline.plan.Plan;
import dev.stopline.plan.PlanParser;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.util.Set;
import org.junit.jupiter.api.Test;

/** The two packages meet only through plain sets: a shipped plan's arms and metrics gate its snapshots. */
class PlanShapeFromPlanTest {

    @Test
    void recommendationsV2_acceptsASnapshotWithItsArmsAndMetrics_andRejectsOneWithoutAGuardrail() throws IOException {
        Plan plan = PlanParser.parse(Path.of("config", "plans", "recommendations-v2.yaml"));
        PlanShape shape = new PlanShape(plan.arms(), plan.metrics());
        assertEquals(Set.of("revenue_per_visitor", "page_load_ms", "error_rate"), shape.metrics());
        String arm = "{\"units\":5000,\"metrics\":{\"revenue_per_visitor\":{\"sum\":12000.5,\"sumOfSquares\":480000.25},"
                + "\"page_load_ms\":{\"sum\":4600000,\"sumOfSquares\":5.2e9},\"error_rate\":{\"sum\":11,\"sumOfSquares\":11}}}";
        String record = "{\"experiment\":\"recommendations-v2\",\"sequence\":1,\"observedAt\":\"2027-03-04T10:00:00Z\","
                + "\"arms\":{\"control\":" + arm + ",\"treatment\":" + arm + "}}";
        Outcome parsed = SnapshotParser.withDefaults().parse(record.getBytes(StandardCharsets.UTF_8), "recommendations-v2");
        Snapshot s = assertInstanceOf(Snapshot.class, parsed);
        assertEquals(s, SnapshotSequencer.check(s, null, shape));

        String withoutErrors = record.replace(",\"error_rate\":{\"sum\":11,\"sumOfSquares\":11}", "");
        Snapshot partial = (Snapshot) SnapshotParser.withDefaults().parse(withoutErrors.getBytes(StandardCharsets.UTF_8));
        Rejection r = assertInstanceOf(Rejection.class, SnapshotSequencer.check(partial, null, shape));
        assertEquals("missing-metric", r.code());
        assertEquals("/arms/control/metrics/error_rate: metric of the plan is missing", r.detail());
    }
}
