package dev.stopline.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.stopline.stats.groupseq.BoundarySet;
import dev.stopline.stats.groupseq.Boundaries;
import dev.stopline.stats.groupseq.Design;
import dev.stopline.stats.groupseq.LookBoundary;
import dev.stopline.stats.groupseq.SampleSize;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.util.ArrayList;
import java.util.Iterator;
import java.util.List;
import org.junit.jupiter.api.Test;
import picocli.CommandLine;

class DesignCommandTest {
    private static final ObjectMapper JSON = new ObjectMapper();

    /** Exit code, stdout and stderr of one in-process run. */
    record Run(int exit, String out, String err) {
        JsonNode json() throws Exception {
            return JSON.readTree(out);
        }

        String[] errLines() {
            return err.isEmpty() ? new String[0] : err.split("\\R");
        }
    }

    private static Run run(CommandLine cmd, String... args) {
        StringWriter out = new StringWriter();
        StringWriter err = new StringWriter();
        cmd.setOut(new PrintWriter(out));
        cmd.setErr(new PrintWriter(err));
        int exit = cmd.execute(args);
        return new Run(exit, out.toString(), err.toString());
    }

    private static Run run(String... args) {
        return run(new CommandLine(new DesignCommand()), args);
    }

    private static List<String> keys(JsonNode node) {
        List<String> keys = new ArrayList<>();
        for (Iterator<String> it = node.fieldNames(); it.hasNext(); ) {
            keys.add(it.next());
        }
        return keys;
    }

    @Test
    void json_defaults_areFiveLookObrienFlemingTypeTwoSided05() throws Exception {
        Run r = run("--format", "json");
        assertEquals(0, r.exit(), r.err());
        JsonNode j = r.json();
        assertEquals(List.of("alpha", "sides", "looks"), keys(j), "no sizing keys without power/effect");
        assertEquals(0.05, j.get("alpha").asDouble(), 0.0);
        assertEquals(2, j.get("sides").asInt());
        JsonNode looks = j.get("looks");
        assertEquals(5, looks.size());
        assertEquals(List.of("informationFraction", "efficacyZ", "futilityZ", "cumulativeAlphaSpent", "nominalPValue"),
                keys(looks.get(0)));
        // Lan-DeMets O'Brien-Fleming-type, K = 5 equal looks, two-sided 0.05 (J&T 2000 / DeMets & Lan 1994, from memory)
        double[] expected = {4.877, 3.357, 2.680, 2.290, 2.031};
        for (int k = 0; k < 5; k++) {
            JsonNode look = looks.get(k);
            assertEquals(0.2 * (k + 1), look.get("informationFraction").asDouble(), 1e-12);
            double z = look.get("efficacyZ").asDouble();
            assertEquals(expected[k], z, 0.0015, "look " + (k + 1) + " z = " + z + " (3-decimal table)");
            assertTrue(look.get("futilityZ").isNull());
        }
        // the whole alpha is spent at the last look, both sides counted
        assertEquals(0.05, looks.get(4).get("cumulativeAlphaSpent").asDouble(), 1e-9);
        // per side, the O'Brien-Fleming-type function at level 0.025 (Lan & DeMets 1983):
        // alpha_side(t) = 2 - 2 Phi(z_{1 - 0.0125} / sqrt(t)); both sides count, so look 1 spends
        // 2 * alpha_side(0.2) = 1.078e-6 (the spend that gives the familiar 4.877)
        org.apache.commons.math3.distribution.NormalDistribution std =
                new org.apache.commons.math3.distribution.NormalDistribution(0, 1); // Commons Math
        double spent1 = 2 * 2 * std.cumulativeProbability(-std.inverseCumulativeProbability(0.9875) / Math.sqrt(0.2));
        assertEquals(spent1, looks.get(0).get("cumulativeAlphaSpent").asDouble(), 1e-6 * spent1);
    }

    @Test
    void json_valuesAreTheEnginesValues() throws Exception {
        Run r = run("--format", "json", "--looks", "0.25,0.6,1", "--spending", "hwang-shih-decani:-4",
                "--alpha", "0.025", "--sides", "1");
        assertEquals(0, r.exit(), r.err());
        BoundarySet plan = Boundaries.compute(Design.of(0.025, 1).withLooks(0.25, 0.6, 1)
                .withSpending("hwang-shih-decani:-4"));
        JsonNode looks = r.json().get("looks");
        for (int k = 0; k < 3; k++) {
            LookBoundary b = plan.looks().get(k);
            JsonNode n = looks.get(k);
            assertEquals(b.efficacyZ(), n.get("efficacyZ").asDouble(), 0.0);
            assertEquals(b.cumulativeAlphaSpent(), n.get("cumulativeAlphaSpent").asDouble(), 0.0);
            assertEquals(b.nominalPValue(), n.get("nominalPValue").asDouble(), 0.0);
        }
    }

    @Test
    void json_classicalPocock_hasConstantBoundary() throws Exception {
        Run r = run("--format", "json", "--boundary", "pocock", "--looks", "5");
        assertEquals(0, r.exit(), r.err());
        for (JsonNode look : r.json().get("looks")) {
            // Pocock (1977) C_P for K = 5, two-sided 0.05: 2.413 (from memory)
            assertEquals(2.413, look.get("efficacyZ").asDouble(), 0.0015);
        }
    }

    @Test
    void json_withPowerAndProportions_givesInflationAndSizesRoundedUp() throws Exception {
        Run r = run("--format", "json", "--power", "0.8", "--baseline-rate", "0.10", "--relative-effect", "0.10");
        assertEquals(0, r.exit(), r.err());
        JsonNode j = r.json();
        assertEquals(List.of("alpha", "sides", "looks", "inflationFactor", "fixedSampleSizePerArm", "sampleSizePerArm"),
                keys(j));
        BoundarySet plan = Boundaries.compute(Design.of(0.05, 2).withEqualLooks(5).withSpending("obrien-fleming")
                .withPower(0.8));
        double rFactor = j.get("inflationFactor").asDouble();
        assertEquals(plan.inflationFactor(), rFactor, 0.0);
        // K = 5 OBF-type inflation factor at 0.05 / 0.8 is about 1.026 (J&T 2000 Table 7.6, from memory)
        assertEquals(1.026, rFactor, 0.003);
        // unpooled formula, 0.10 vs 0.11: (z_.975 + z_.8)^2 (0.09 + 0.0979) / 0.01^2 = 14748.05 (hand calculation)
        assertEquals(14749, j.get("fixedSampleSizePerArm").asLong());
        assertEquals((long) Math.ceil(rFactor * 14748.045020841948), j.get("sampleSizePerArm").asLong());
    }

    @Test
    void json_means_relativeAndAbsoluteEffectsAgree() throws Exception {
        Run rel = run("--format", "json", "--power", "0.8", "--mean", "40", "--sd", "30", "--relative-effect", "0.05");
        Run abs = run("--format", "json", "--power", "0.8", "--sd", "30", "--absolute-effect", "2");
        assertEquals(0, rel.exit(), rel.err());
        assertEquals(0, abs.exit(), abs.err());
        // 15.70 sd^2 / d^2 = 15.69776 * 900 / 4 = 3531.996 -> 3532 (common practice)
        long fixed = rel.json().get("fixedSampleSizePerArm").asLong();
        assertEquals(3532, fixed);
        assertEquals(fixed, abs.json().get("fixedSampleSizePerArm").asLong());
        assertEquals(rel.json().get("sampleSizePerArm").asLong(), abs.json().get("sampleSizePerArm").asLong());
    }

    @Test
    void json_nonBindingFutility_addsNoteAndFutilityBounds() throws Exception {
        Run r = run("--format", "json", "--futility", "power:2", "--beta", "0.2", "--power", "0.8");
        assertEquals(0, r.exit(), r.err());
        JsonNode j = r.json();
        assertEquals("efficacy boundaries computed as if futility did not exist", j.get("note").asText());
        JsonNode looks = j.get("looks");
        assertFalse(looks.get(0).get("futilityZ").isNull());
        // non-binding: efficacy equals the design without futility
        Run plain = run("--format", "json", "--power", "0.8");
        for (int k = 0; k < 5; k++) {
            assertEquals(plain.json().get("looks").get(k).get("efficacyZ").asDouble(),
                    looks.get(k).get("efficacyZ").asDouble(), 1e-9);
        }
        Run binding = run("--format", "json", "--futility", "power:2", "--beta", "0.2", "--binding");
        assertEquals(0, binding.exit(), binding.err());
        assertFalse(binding.json().has("note"));
    }

    @Test
    void table_isAlignedAndSized() {
        Run r = run("--power", "0.8", "--baseline-rate", "0.10", "--relative-effect", "0.10",
                "--futility", "power:2", "--beta", "0.2");
        assertEquals(0, r.exit(), r.err());
        String[] lines = r.out().split("\\R");
        assertTrue(lines[0].startsWith("design: two-sided alpha 0.05, 5 looks, alpha spending obrien-fleming"),
                lines[0]);
        assertTrue(lines[1].contains("efficacy z") && lines[1].contains("futility z") && lines[1].contains("n per arm"),
                lines[1]);
        for (int i = 2; i <= 6; i++) {
            assertEquals(lines[1].length(), lines[i].length(), "column alignment of row " + i);
        }
        assertTrue(r.out().contains("efficacy boundaries computed as if futility did not exist"), r.out());
        assertTrue(r.out().contains("sample size per arm: fixed horizon 14749, group-sequential maximum"), r.out());
    }

    @Test
    void badLooks_oneLineNamingOptionAndRule_exit2() {
        Run r = run(DesignCommand.commandLine(), "--looks", "0.5,0.4,1");
        assertEquals(2, r.exit());
        assertEquals(1, r.errLines().length, r.err());
        assertEquals("--looks: fractions must increase strictly and end at 1 (got 0.5,0.4,1)", r.errLines()[0]);
        assertEquals("", r.out());
    }

    @Test
    void badOptions_exit2_withTheRuleOnTheFirstLine() {
        String[][] cases = {
            {"--looks", "0.5,0.9", "--looks: fractions must increase strictly and end at 1 (got 0.5,0.9)"},
            {"--looks", "0", "--looks: K must be in [1, 200] (got 0)"},
            {"--alpha", "1.5", "--alpha: must be in (0, 1) (got 1.5)"},
            {"--sides", "3", "--sides: must be 1 or 2 (got 3)"},
            {"--format", "xml", "--format: must be table or json (got xml)"},
            {"--boundary", "haybittle", "--boundary: must be pocock or obrien-fleming (got haybittle)"},
            {"--beta", "0.2", "--beta: needs --futility SPEC"},
            {"--relative-effect", "0.1", "--relative-effect: needs --baseline-rate p (proportions) or --sd s (means)"},
            {"--baseline-rate", "0.1", "--baseline-rate: needs --relative-effect r or --absolute-effect d"},
        };
        for (String[] c : cases) {
            Run r = run(DesignCommand.commandLine(), c[0], c[1]);
            assertEquals(2, r.exit(), String.join(" ", c));
            assertEquals(c[2], r.errLines()[0]);
            assertEquals(1, r.errLines().length, r.err());
        }
        Run both = run(DesignCommand.commandLine(), "--spending", "pocock", "--boundary", "pocock");
        assertEquals(2, both.exit());
        assertEquals("--spending/--boundary: give exactly one of them (got both)", both.errLines()[0]);
        Run classicalFutility = run(DesignCommand.commandLine(), "--boundary", "pocock", "--futility", "power:2",
                "--beta", "0.2");
        assertEquals(2, classicalFutility.exit());
        assertEquals("--futility: classical --boundary takes no futility; use --spending for beta spending",
                classicalFutility.errLines()[0]);
        Run mismatch = run(DesignCommand.commandLine(), "--futility", "power:2", "--beta", "0.2", "--power", "0.9");
        assertEquals(2, mismatch.exit());
        assertEquals("--power: must equal 1 - beta = 0.8 when --futility spends beta (got 0.9)", mismatch.errLines()[0]);
        Run noPower = run(DesignCommand.commandLine(), "--baseline-rate", "0.1", "--relative-effect", "0.1");
        assertEquals(2, noPower.exit());
        assertEquals("--power: needed for sample size (or --futility with --beta)", noPower.errLines()[0]);
    }

    @Test
    void coreRuleBroken_isReportedUnderTheOptionThatCarriedIt() {
        Run r = run(DesignCommand.commandLine(), "--spending", "quadratic");
        assertEquals(2, r.exit());
        assertTrue(r.errLines()[0].startsWith("--spending: unknown spending function 'quadratic'"), r.err());
        // with picocli's default handler the rule is still the first line (usage follows)
        Run d = run("--spending", "quadratic");
        assertEquals(2, d.exit());
        assertEquals(r.errLines()[0], d.errLines()[0]);
    }

    @Test
    void help_exitsZeroAndListsOptions() {
        Run r = run("--help");
        assertEquals(0, r.exit());
        assertTrue(r.out().contains("--looks") && r.out().contains("--spending"), r.out());
    }

    @Test
    void sizes_useTheSameRoundingAsSampleSize() throws Exception {
        Run r = run("--format", "json", "--power", "0.9", "--sides", "1", "--alpha", "0.025", "--looks", "3",
                "--baseline-rate", "0.2", "--absolute-effect", "-0.02");
        assertEquals(0, r.exit(), r.err());
        double fixed = SampleSize.of(0.025, 1, 0.9).proportions(0.2, 0.18).control();
        assertEquals(SampleSize.roundUp(fixed), r.json().get("fixedSampleSizePerArm").asLong());
    }
}
