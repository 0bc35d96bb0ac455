package dev.stopline.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.plan.Plan;
import dev.stopline.plan.PlanParser;
import dev.stopline.stats.groupseq.Boundaries;
import dev.stopline.stats.groupseq.LookBoundary;
import dev.stopline.testing.Streams;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import org.apache.commons.math3.distribution.NormalDistribution;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * End-to-end proof that a replayed stream stops exactly where the planned boundaries say: counts are
 * built so that z is just below the O'Brien-Fleming-type efficacy boundary at look 2 and just above it at
 * look 3, at exactly the planned information fractions, and the replay must stop at look 3 with the
 * core's boundary. The margin is {@value #MARGIN} on the z scale: far above the rounding of z (about
 * 1e-14, printed on failure) and of the boundary solve (tolerance 1e-10 in {@code Boundaries}), far
 * below anything a wrong boundary or a wrong look would produce.
 */
class ReplayObrienFlemingStopTest {
    /** Distance of z from the boundary. */
    static final double MARGIN = 1e-6;
    /** Evaluator boundary against the planned boundary: the same code at the same fractions. */
    static final double SAME_CODE = 1e-9;
    /** Units per arm at full information: 5 equal looks of 10 000 per arm make t_k = k/5 exactly. */
    static final long MAX_UNITS = 50_000;

    // An invented bookshop experiment: average order value (a mean), two-sided 0.05 (common practice),
    // five equally spaced looks, O'Brien-Fleming-type spending (Lan & DeMets 1983), non-binding futility.
    static final String PLAN = """
            experiment: basket-value-banner
            description: Free-delivery banner above the basket, measured on order value.
            allocation: {control: 0.5, treatment: 0.5}
            control: control
            primary:
              metric: order_value
              type: mean
              method: group-sequential
              alpha: 0.05
              sides: 2
              spending: obrien-fleming
              looks: 5
              maxUnitsPerArm: 50000
              minimumEffect: 0.5
              baselineMean: 40
              sd: 12
              futility: {spending: "power:2", beta: 0.2, binding: false}
            sampleRatio: {alpha: 0.001}
            """;

    @TempDir
    Path dir;
    Path planFile;
    Plan plan;
    List<LookBoundary> planned;
    /** The whole JSON of the last replay, for its alerts. */
    JsonNode lastRoot;

    @BeforeEach
    void plan() throws IOException {
        planFile = Files.writeString(dir.resolve("plan.yaml"), PLAN);
        plan = PlanParser.parse(planFile);
        planned = Boundaries.compute(ExperimentMonitor.designOf(plan.primary())).looks();
    }

    /** Units per arm, z wanted: looks 1-3 at 10 000 k per arm, one snapshot between looks. */
    private Streams.MeanStream stream(double zAtLook3) {
        double b1 = planned.get(0).efficacyZ();
        double a1 = planned.get(0).futilityZ();
        return Streams.mean(plan.experiment(), "order_value", Instant.parse("2027-03-01T00:00:00Z"))
                .snapshot(5_000, 1.0)                               // t = 0.1: before the first planned look
                .snapshot(10_000, (Math.max(a1, 0) + b1) / 2)       // look 1, t = 0.2: between the boundaries
                .snapshot(15_000, 2.0)                              // t = 0.3: no look
                .snapshot(20_000, planned.get(1).efficacyZ() - MARGIN)  // look 2, t = 0.4: just below
                .snapshot(30_000, zAtLook3);                        // look 3, t = 0.6
    }

    private List<JsonNode> primaryLooks(Streams.MeanStream stream) throws IOException {
        Path counts = Files.writeString(dir.resolve("counts.jsonl"), stream.jsonl());
        CliRun r = ReplayCommandTest.run("replay", "--plan", planFile.toString(), "--counts",
                counts.toString(), "--format", "json");
        assertEquals(0, r.code(), r.err());
        JsonNode root = r.json();
        assertEquals(0, root.get("rejected").size(), "the built stream must be valid: " + root.get("rejected"));
        List<JsonNode> looks = new ArrayList<>();
        root.get("looks").forEach(looks::add);
        lastRoot = root;
        return looks;
    }

    @Test
    void builtFractions_areExactlyThePlannedOnes_asTheEvaluatorComputesThem() {
        ExperimentMonitor monitor = ExperimentMonitor.of(plan, 1);
        for (int k = 1; k <= 5; k++) {
            long n = MAX_UNITS * k / 5;
            assertEquals(planned.get(k - 1).informationFraction(), monitor.sizing().informationFraction(n, n), 0.0,
                    "t_" + k + " = k/5 (Looks.equallySpaced) and n_c n_t/(n_c+n_t) / I_max with n = " + n);
        }
    }

    @Test
    void zJustAboveTheBoundaryAtLook3_stopsAtLook3_withTheCoresBoundary() throws IOException {
        LookBoundary b3 = planned.get(2);
        Streams.MeanStream stream = stream(b3.efficacyZ() + MARGIN);
        assertEquals(planned.get(1).efficacyZ() - MARGIN, stream.z(3), 1e-12, "z reached at look 2");
        assertEquals(b3.efficacyZ() + MARGIN, stream.z(4), 1e-12, "z reached at look 3");
        List<JsonNode> looks = primaryLooks(stream);

        assertEquals(3, looks.size(), "looks at t = 0.2, 0.4, 0.6 and none after the stop: " + looks);
        for (int k = 1; k <= 3; k++) {
            JsonNode l = looks.get(k - 1);
            LookBoundary p = planned.get(k - 1);
            assertEquals(k, l.get("look").asInt());
            assertEquals(p.informationFraction(), l.get("informationFraction").asDouble(), 1e-15, "t_" + k);
            double err = Math.abs(l.get("efficacyZ").asDouble() - p.efficacyZ());
            assertTrue(err <= SAME_CODE, "efficacy bound at look " + k + ": replay " + l.get("efficacyZ")
                    + " against Boundaries.compute " + p.efficacyZ() + ", error " + err);
            assertEquals(p.cumulativeAlphaSpent(), l.get("cumulativeAlphaSpent").asDouble(), 1e-12, "alpha ledger at " + k);
        }
        assertEquals(List.of("continue", "continue", "efficacy"), looks.stream().map(l -> l.get("decision").asText()).toList());
        assertEquals(5, looks.get(2).get("sequence").asInt(), "the fifth snapshot is look 3");

        JsonNode alerts = lastRoot.get("alerts");
        assertEquals(1, alerts.size(), alerts.toString());
        assertEquals("efficacy", alerts.get(0).get("kind").asText());
        assertEquals(3, alerts.get(0).get("look").asInt());
        assertEquals(5, alerts.get(0).get("sequence").asInt());
    }

    @Test
    void plannedBoundaries_matchThePublishedObrienFlemingTypeValues() {
        // Lan-DeMets O'Brien-Fleming-type spending, K = 5 equally spaced looks, two-sided 0.05:
        // 4.877, 3.357, 2.680, 2.290, 2.031 (as tabulated for this design in the group-sequential literature,
        // e.g. Jennison & Turnbull 2000 ch. 7; from memory). Three decimals: +/-0.0005 rounding, +0.0005 slack.
        double[] published = {4.877, 3.357, 2.680, 2.290, 2.031};
        for (int k = 0; k < published.length; k++) {
            double err = Math.abs(planned.get(k).efficacyZ() - published[k]);
            assertTrue(err <= 0.001, "look " + (k + 1) + ": " + planned.get(k).efficacyZ() + " against " + published[k]
                    + ", error " + err);
        }
    }

    @Test
    void zJustBelowTheBoundaryAtLook3_continues() throws IOException {
        List<JsonNode> looks = primaryLooks(stream(planned.get(2).efficacyZ() - MARGIN));
        assertEquals(List.of("continue", "continue", "continue"), looks.stream().map(l -> l.get("decision").asText()).toList());
        assertEquals(0, lastRoot.get("alerts").size(), lastRoot.get("alerts").toString());
    }

    @Test
    void alphaLedger_followsTheObrienFlemingTypeSpendingFunction() throws IOException {
        // Lan & DeMets (1983) O'Brien-Fleming type, per side at alpha/2 = 0.025:
        // alpha_1(t) = 2 - 2 Phi(z_{1 - 0.025/2} / sqrt(t)); two-sided total is twice that (Commons Math normal).
        NormalDistribution n = new NormalDistribution();
        double zq = n.inverseCumulativeProbability(1 - 0.025 / 2);
        List<JsonNode> looks = primaryLooks(stream(planned.get(2).efficacyZ() + MARGIN));
        for (JsonNode l : looks) {
            double t = l.get("informationFraction").asDouble();
            double expected = 2 * (2 - 2 * n.cumulativeProbability(zq / Math.sqrt(t)));
            double err = Math.abs(l.get("cumulativeAlphaSpent").asDouble() - expected);
            assertTrue(err <= 1e-12 + 1e-9 * expected, "alpha spent by t = " + t + ": " + l.get("cumulativeAlphaSpent")
                    + " against " + expected + ", error " + err);
        }
    }
}
