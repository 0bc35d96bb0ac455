package dev.stopline.plan;

import static dev.stopline.plan.PlanParserTest.VALID;
import static dev.stopline.plan.PlanParserTest.problems;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.List;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.Arguments;
import org.junit.jupiter.params.provider.CsvSource;
import org.junit.jupiter.params.provider.MethodSource;

/**
 * One broken rule at a time on an otherwise valid plan: exactly the expected problem, nothing else.
 * The expected texts are the rule statements the plan reference asks for.
 */
class PlanValidatorTest {
    static final String FUTILITY_LINE = "  futility: {spending: \"power:2\", beta: 0.2, binding: false}\n";

    static Stream<Arguments> oneBrokenRule() {
        return Stream.of(
                Arguments.of("alpha: 0.05", "alpha: 1.5", "primary.alpha: must be in (0, 1), got 1.5"),
                Arguments.of("{control: 0.5, treatment: 0.5}", "{control: 0.5, treatment: 0.4}",
                        "allocation: weights must sum to 1, got 0.9"),
                Arguments.of("{control: 0.5, treatment: 0.5}", "{control: 1.0}", "allocation: needs exactly 2 arms (a control and one treatment; run one plan per treatment to compare more), got 1"),
                Arguments.of("{control: 0.5, treatment: 0.5}", "{control: 1.0, treatment: 0}",
                        "allocation.treatment: must be finite and > 0, got 0"),
                Arguments.of("control: control", "control: ctrl",
                        "control: \"ctrl\" is not an arm of allocation (arms: control, treatment)"),
                Arguments.of("control: control", "control: Control",
                        "control: \"Control\" is not an arm of allocation (arms: control, treatment) (did you mean control?)"),
                Arguments.of("experiment: checkout-redesign", "experiment: Checkout Redesign",
                        "experiment: must match [a-z0-9][a-z0-9._-]{0,127}, got \"Checkout Redesign\""),
                Arguments.of("spending: obrien-fleming", "spending: obrien-fleming\n  boundary: obrien-fleming",
                        "primary: give exactly one of spending or boundary, got both"),
                Arguments.of("spending: obrien-fleming", "spending: obrien-flemming",
                        "primary.spending: unknown spending function 'obrien-flemming'; " + GRAMMAR + " (did you mean obrien-fleming?)"),
                Arguments.of("[0.2, 0.4, 0.6, 0.8, 1.0]", "[0.2, 0.6, 0.4, 1.0]",
                        "primary.looks: must be strictly increasing, got 0.4 after 0.6"),
                Arguments.of("[0.2, 0.4, 0.6, 0.8, 1.0]", "[0.5, 0.8]",
                        "primary.looks: the last look must be at information fraction 1, got 0.8"),
                Arguments.of("[0.2, 0.4, 0.6, 0.8, 1.0]", "[0, 1]",
                        "primary.looks[0]: information fraction must be in (0, 1], got 0"),
                Arguments.of("  maxUnitsPerArm: 60000\n", "",
                        "primary.maxUnitsPerArm: required, or power with minimumEffect and baselineRate to size from"),
                Arguments.of("maxUnitsPerArm: 60000", "power: 0.8", "primary.minimumEffect: required to size from power"),
                Arguments.of("maxUnitsPerArm: 60000", "maxUnitsPerArm: 1",
                        "primary.maxUnitsPerArm: must be at least 2, got 1"),
                Arguments.of("maxUnitsPerArm: 60000", "maxUnitsPerArm: 60000\n  power: 0.8",
                        "primary.power: give either maxUnitsPerArm or power (to size from), not both"),
                Arguments.of("maxUnitsPerArm: 60000", "power: 0.03\n  minimumEffect: 0.01",
                        "primary.power: must be in (alpha, 1) = (0.05, 1), got 0.03"),
                Arguments.of("maxUnitsPerArm: 60000", "maxUnitsPerArm: 60000.5", "primary.maxUnitsPerArm: must be a whole number, got number 60000.5"),
                Arguments.of("baselineRate: 0.10", "baselineRate: 0.10\n  baselineMean: 3",
                        "primary.baselineMean: only for type mean or ratio (a proportion's spread follows from baselineRate)"),
                Arguments.of("baselineRate: 0.10", "baselineRate: 1.10", "primary.baselineRate: must be in (0, 1), got 1.1"),
                Arguments.of("sides: 2", "sides: 3", "primary.sides: must be 1 or 2, got 3"),
                Arguments.of("futility: {spending: \"power:2\", beta: 0.2, binding: false}",
                        "futility: {spending: \"power:0\", beta: 0.2, binding: false}",
                        "primary.futility.spending: power-family rho 0.0 must be finite and > 0"),
                Arguments.of("futility: {spending: \"power:2\", beta: 0.2, binding: false}",
                        "futility: {spending: \"power:2\", beta: 0.2, binding: \"false\"}",
                        "primary.futility.binding: must be true or false, got string \"false\""),
                Arguments.of("futility: {spending: \"power:2\", beta: 0.2, binding: false}",
                        "futility: {spending: \"power:2\", beta: 0.2, binding: false}\n  mixtureSprt: {tau: 0.01}",
                        "primary.mixtureSprt: only for method mixture-sprt"),
                Arguments.of("margin: 0.05, relative: true", "margin: -0.05, relative: true",
                        "guardrails[0].margin: must be finite and >= 0, got -0.05"),
                Arguments.of("margin: 0.05, relative: true", "margin: 0, relative: true",
                        "guardrails[0].tau: required when margin is 0 (tau defaults to the margin)"),
                Arguments.of("harmful: increase, ", "", "guardrails[0].harmful: required: increase or decrease"),
                Arguments.of("alpha: 0.01}\n", "alpha: 0.01}\n  - {metric: page_load_ms, type: mean, harmful: increase, margin: 0.1}\n",
                        "guardrails[1].metric: \"page_load_ms\" is already a guardrail (guardrails[0])"),
                Arguments.of("sampleRatio: {alpha: 0.001}", "sampleRatio: {alpha: 0}", "sampleRatio.alpha: must be in (0, 1), got 0"),
                Arguments.of("sampleRatio: {alpha: 0.001}", "sampleRatio: {alpah: 0.001}",
                        "sampleRatio.alpah: unknown key (did you mean alpha?)"),
                Arguments.of("guardrails:", "guardrail:", "guardrail: unknown key (did you mean guardrails?)"));
    }

    @ParameterizedTest(name = "{2}")
    @MethodSource("oneBrokenRule")
    void oneBrokenRule_isReportedAlone(String from, String to, String expected) {
        String yaml = VALID.replace(from, to);
        assertTrue(!yaml.equals(VALID), "the test case must change the plan");
        assertEquals(List.of(expected), problems(yaml));
    }

    @Test
    void sprtMethod_rejectsGroupSequentialKeys_andRequiresItsBlock() {
        assertEquals(List.of(
                        "primary.spending: only for method group-sequential; sprt checks every snapshot",
                        "primary.looks: only for method group-sequential; sprt checks every snapshot",
                        "primary.futility: only for method group-sequential; sprt checks every snapshot",
                        "primary.sprt: required for method sprt: {minimumEffect, beta}"),
                problems(VALID.replace("method: group-sequential", "method: sprt")));
    }

    @Test
    void mixtureSprt_needsPositiveTau() {
        String yaml = VALID.replace("method: group-sequential", "method: mixture-sprt")
                .replace("  spending: obrien-fleming\n  looks: [0.2, 0.4, 0.6, 0.8, 1.0]\n", "")
                .replace("futility: {spending: \"power:2\", beta: 0.2, binding: false}", "mixtureSprt: {tau: -0.01}");
        assertEquals(List.of("primary.mixtureSprt.tau: must be finite and > 0, got -0.01"), problems(yaml));
    }

    @Test
    void meanMetric_sizedFromPower_needsBaselineMeanAndSd() {
        String yaml = VALID.replace("type: proportion", "type: mean").replace("baselineRate: 0.10", "minimumEffect: 0.2")
                .replace("maxUnitsPerArm: 60000", "power: 0.8");
        assertEquals(List.of("primary.baselineMean: required to size from power", "primary.sd: required to size from power"),
                problems(yaml));
    }

    @Test
    void classicalBoundary_onUnequalLooks_isRefusedWithTheWayOut() {
        String yaml = PlanParserTest.VALID.replace(FUTILITY_LINE, "").replace("spending: obrien-fleming\n  looks: [0.2, 0.4, 0.6, 0.8, 1.0]",
                "boundary: pocock\n  looks: [0.3, 0.6, 1.0]");
        assertEquals(List.of("primary.boundary: pocock is a classical boundary for equally spaced looks k/K, got looks "
                + "[0.3, 0.6, 1.0]; use spending: pocock for unequal looks"), problems(yaml));
    }

    @Test
    void classicalBoundary_withFutility_isRefusedWithTheWayOut() {
        assertEquals(List.of("primary.futility: a classical pocock boundary has no futility part; use spending: pocock "
                + "with futility"), problems(VALID.replace("spending: obrien-fleming", "boundary: pocock")));
    }

    @Test
    void classicalBoundary_acceptsEquallySpacedLooks_givenAsAListOrAsCount() {
        String VALID = PlanParserTest.VALID.replace(FUTILITY_LINE, "");
        assertEquals(List.of(), problems(VALID.replace("spending: obrien-fleming", "boundary: pocock")));
        assertEquals(List.of(), problems(VALID.replace("spending: obrien-fleming", "boundary: obrien-fleming")
                .replace("[0.2, 0.4, 0.6, 0.8, 1.0]", "3")));
        // thirds written to 16 digits are equally spaced within the 1e-9 tolerance
        assertEquals(List.of(), problems(VALID.replace("spending: obrien-fleming", "boundary: pocock")
                .replace("[0.2, 0.4, 0.6, 0.8, 1.0]", "[0.3333333333333333, 0.6666666666666666, 1.0]")));
    }

    @Test
    void manyBrokenRules_areAllReportedAtOnce() {
        String yaml = VALID.replace("experiment: checkout-redesign", "experiment: _bad")
                .replace("treatment: 0.5}", "treatment: 0.6}")
                .replace("alpha: 0.05", "alpha: 0")
                .replace("spending: obrien-fleming", "spendng: obrien-fleming")
                .replace("1.0]", "0.9]")
                .replace("margin: 0.05", "margin: -1")
                .replace("sampleRatio: {alpha: 0.001}", "sampleRatio: {alpha: 2}");
        List<String> p = problems(yaml);
        assertEquals(List.of(
                "primary.spendng: unknown key (did you mean spending?)",
                "experiment: must match [a-z0-9][a-z0-9._-]{0,127}, got \"_bad\"",
                "allocation: weights must sum to 1, got 1.1",
                "primary.alpha: must be in (0, 1), got 0",
                "primary: method group-sequential needs exactly one of spending or boundary, got neither",
                "primary.looks: the last look must be at information fraction 1, got 0.9",
                "guardrails[0].margin: must be finite and >= 0, got -1",
                "sampleRatio.alpha: must be in (0, 1), got 2"), p);
    }

    @Test
    void programmaticPlan_withNullsEverywhere_reportsEachRequiredKey() {
        Plan empty = new Plan(null, null, null, null, null, null, null, null);
        assertEquals(List.of("experiment: required", "allocation: required", "control: required", "primary: required"),
                PlanValidator.validate(empty).stream().map(PlanProblem::toString).toList());
    }

    /** The grammar as SpendingFunction states it in every parse error. */
    private static final String GRAMMAR = "expected " + dev.stopline.stats.groupseq.SpendingFunction.GRAMMAR;

    @ParameterizedTest
    @CsvSource({"obrien-fleming", "pocock", "Pocock", "hwang-shih-decani:-4", "hwang-shih-decani:1", "hwang-shih-decani:0",
            "hwang-shih-decani:20", "power:1", "power:2.5", "power:3e0"})
    void spendingGrammar_acceptsWhatTheEngineBuilds(String spec) {
        assertNull(PlanValidator.spendingProblem(spec));
    }

    @ParameterizedTest
    @CsvSource(delimiter = '|', value = {
            "power|spending function 'power' needs a parameter after ':'; ",
            "power:-1|power-family rho -1.0 must be finite and > 0",
            "power:NaN|spending function 'power:NaN' has a parameter that is not a number; ",
            "pocock:2|spending function 'pocock:2' takes no parameter; ",
            "hwang-shih-decani:21|Hwang-Shih-DeCani gamma 21.0 must be finite with |gamma| <= 20.0",
            "kim-demets:2|unknown spending function 'kim-demets:2'; ",
            "obrein-fleming|unknown spending function 'obrein-fleming'; "})
    void spendingGrammar_rejectsWithTheEnginesRule(String spec, String rulePrefix) {
        String rule = PlanValidator.spendingProblem(spec);
        assertTrue(rule != null && rule.startsWith(rulePrefix.strip()), () -> spec + " gave " + rule);
    }

    @Test
    void spendingGrammar_suggestsTheClosestFamily() {
        assertEquals("unknown spending function 'obrein-fleming'; " + GRAMMAR + " (did you mean obrien-fleming?)",
                PlanValidator.spendingProblem("obrein-fleming"));
    }
}
