package dev.stopline.plan;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.stream.Collectors;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.MethodSource;

/** Reading plans: the shipped examples, the safe loader's limits, and structural problems. */
class PlanParserTest {
    /** A complete valid plan in the shape of the plan reference; tests break one thing at a time. */
    static final String VALID = """
            experiment: checkout-redesign
            allocation: {control: 0.5, treatment: 0.5}
            control: control
            primary:
              metric: orders
              type: proportion
              method: group-sequential
              alpha: 0.05
              sides: 2
              spending: obrien-fleming
              looks: [0.2, 0.4, 0.6, 0.8, 1.0]
              maxUnitsPerArm: 60000
              baselineRate: 0.10
              futility: {spending: "power:2", beta: 0.2, binding: false}
            guardrails:
              - {metric: page_load_ms, type: mean, harmful: increase, margin: 0.05, relative: true, alpha: 0.01}
            sampleRatio: {alpha: 0.001}
            """;

    static Stream<Path> examplePlans() throws IOException {
        return Files.list(Path.of("config", "plans")).filter(p -> p.toString().endsWith(".yaml")).sorted();
    }

    @Test
    void examplePlans_areTheThreeBookshopExperiments() throws IOException {
        List<String> names = examplePlans().map(p -> p.getFileName().toString()).collect(Collectors.toList());
        assertEquals(List.of("checkout-redesign.yaml", "gift-wrap-upsell.yaml", "recommendations-v2.yaml"), names);
    }

    @ParameterizedTest
    @MethodSource("examplePlans")
    void examplePlan_validates_andIsNamedAfterItsExperiment(Path file) throws IOException {
        Plan plan = PlanParser.parse(file);
        assertEquals(file.getFileName().toString().replace(".yaml", ""), plan.experiment());
        assertTrue(PlanValidator.validate(plan).isEmpty());
    }

    @Test
    void checkoutRedesign_bindsEveryKeyOfTheReference() throws IOException {
        Plan p = PlanParser.parse(Path.of("config", "plans", "checkout-redesign.yaml"));
        assertEquals(List.of("control", "treatment"), List.copyOf(p.arms()));
        assertEquals(List.of("orders", "page_load_ms"), List.copyOf(p.metrics()));
        assertEquals(Method.GROUP_SEQUENTIAL, p.primary().method());
        assertEquals(List.of(0.2, 0.4, 0.6, 0.8, 1.0), p.primary().looks().fractions()); // looks: 5 means k/5
        assertEquals(new Futility("power:2", 0.2, false), p.primary().futility());
        assertEquals(new Guardrail("page_load_ms", MetricType.MEAN, Harm.INCREASE, 0.05, true, 0.01, null),
                p.guardrails().get(0));
        assertEquals(0.05, p.guardrails().get(0).mixingSd()); // tau defaults to the margin
    }

    @Test
    void omittedOptionalKeys_takeTheirDocumentedDefaults() {
        Plan p = PlanParser.parseYaml(VALID.replace("  sides: 2\n", "")
                .replace("sampleRatio: {alpha: 0.001}\n", "")
                .replace(", relative: true, alpha: 0.01}", "}"));
        assertEquals(2, p.primary().sides());                 // common practice: two-sided
        assertEquals(0.001, p.sampleRatio().alpha());          // common practice for sample-ratio checks
        assertEquals(false, p.guardrails().get(0).relative()); // documented default
        assertEquals(0.01, p.guardrails().get(0).alpha());     // documented default
    }

    @Test
    void jsonBody_parsesToTheSamePlanAsYaml() {
        String json = """
                {"experiment":"checkout-redesign","allocation":{"control":0.5,"treatment":0.5},"control":"control",
                 "primary":{"metric":"orders","type":"proportion","method":"group-sequential","alpha":0.05,"sides":2,
                  "spending":"obrien-fleming","looks":[0.2,0.4,0.6,0.8,1.0],"maxUnitsPerArm":60000,"baselineRate":0.10,
                  "futility":{"spending":"power:2","beta":0.2,"binding":false}},
                 "guardrails":[{"metric":"page_load_ms","type":"mean","harmful":"increase","margin":0.05,"relative":true,"alpha":0.01}],
                 "sampleRatio":{"alpha":0.001}}
                """;
        assertEquals(PlanParser.parseYaml(VALID), PlanParser.parseJson(json));
        assertEquals(PlanParser.parseYaml(VALID), PlanParser.parse(json.getBytes(StandardCharsets.UTF_8), PlanParser.Format.AUTO));
    }

    @Test
    void misspeltKey_isReportedWithTheClosestKnownKey() {
        assertEquals(List.of("primary.spendng: unknown key (did you mean spending?)",
                        "primary: method group-sequential needs exactly one of spending or boundary, got neither"),
                problems(VALID.replace("spending: obrien", "spendng: obrien")));
    }

    @Test
    void unknownEnumValue_listsTheChoices_andSuggestsOne() {
        assertEquals(List.of("primary.type: must be one of proportion, mean, ratio, got \"proportions\" (did you mean proportion?)"),
                problems(VALID.replace("type: proportion", "type: proportions")));
    }

    @Test
    void wrongType_isOneProblem_notAlsoRequired() {
        assertEquals(List.of("primary.alpha: must be a number, got string \"0.05\""),
                problems(VALID.replace("alpha: 0.05", "alpha: \"0.05\"")));
    }

    @Test
    void looksAsAnInteger_outOfRange_isReported() {
        assertEquals(List.of("primary.looks: number of looks must be in [1, 100], got 0"),
                problems(VALID.replace("looks: [0.2, 0.4, 0.6, 0.8, 1.0]", "looks: 0")));
    }

    @Test
    void duplicateKey_isRejected_ratherThanLastOneWins() {
        List<String> p = problems(VALID.replace("  sides: 2\n", "  sides: 2\n  sides: 1\n"));
        assertEquals(1, p.size(), p::toString);
        assertTrue(p.get(0).startsWith("(document): is not valid YAML at line 10"), p::toString);
        assertTrue(p.get(0).contains("Duplicate field 'sides'"), p::toString);
    }

    @Test
    void secondYamlDocument_isRejected() {
        assertEquals(List.of("(document): holds more than one YAML document at line 19, column 1"),
                problems(VALID + "---\nexperiment: other\n"));
    }

    @Test
    void syntaxError_givesLineAndColumn() {
        List<String> p = problems("experiment: x\nallocation: {control: 0.5\n");
        assertEquals(1, p.size(), p::toString);
        assertTrue(p.get(0).startsWith("(document): is not valid YAML at line"), p::toString);
    }

    @Test
    void documentOverTheSizeLimit_isRejectedBeforeParsing() {
        String big = VALID + "description: \"" + "x".repeat(PlanParser.MAX_BYTES) + "\"\n";
        assertEquals(List.of("(document): larger than 65536 bytes; a stopping plan is a page of YAML"), problems(big));
    }

    @Test
    void deepNesting_isRejected() {
        List<String> p = problems(VALID + "owner: " + "[".repeat(40) + "]".repeat(40) + "\n");
        assertEquals(1, p.size(), p::toString);
        assertTrue(p.get(0).contains("nesting depth"), p::toString);
    }

    @Test
    void aliasBomb_doesNotExpand_andEndsAsUnknownKeys() {
        // nine levels of nine aliases would be 9^9 (387 million) nodes if aliases were expanded
        StringBuilder y = new StringBuilder(VALID).append("l0: &l0 [x, x, x, x, x, x, x, x, x]\n");
        for (int i = 1; i < 9; i++) {
            String ref = "*l" + (i - 1);
            y.append("l").append(i).append(": &l").append(i).append(" [")
                    .append(String.join(", ", java.util.Collections.nCopies(9, ref))).append("]\n");
        }
        long start = System.nanoTime();
        List<String> p = problems(y.toString());
        assertTrue(System.nanoTime() - start < 5_000_000_000L, "alias expansion suspected");
        assertFalse(p.isEmpty());
        assertTrue(p.stream().allMatch(s -> s.contains("unknown key") || s.contains("aliases") || s.contains("could not be read")), p::toString);
    }

    @Test
    void javaTypeTag_buildsNoObject_andIsJustAnUnknownKey() {
        assertEquals(List.of("gadget: unknown key"),
                problems(VALID + "gadget: !!javax.script.ScriptEngineManager [!!java.net.URLClassLoader [[!!java.net.URL [\"http://localhost/\"]]]]\n"));
    }

    @Test
    void guardrailThatIsNotAMapping_keepsTheIndicesOfLaterGuardrails() {
        // the bad item is reported once; the valid item after it is still checked as guardrails[1]
        String yaml = VALID.replace("guardrails:\n", "guardrails:\n  - page_load_ms\n")
                .replace("margin: 0.05", "margin: -0.05");
        assertEquals(List.of("guardrails[0]: must be a mapping, got string \"page_load_ms\"",
                "guardrails[1].margin: must be finite and >= 0, got -0.05"), problems(yaml));
        assertEquals(List.of("guardrails: must be a list, got mapping"),
                problems(VALID.replace("  - {metric: page_load_ms", "  page: {metric: page_load_ms")));
    }

    @Test
    void rootThatIsNotAMapping_isOneProblem() {
        assertEquals(List.of("(document): must be a mapping of keys to values, got list"), problems("- a\n- b\n"));
        assertEquals(List.of("(document): is empty"), problems("# nothing here\n"));
    }

    @Test
    void planException_message_listsEveryProblemOnItsOwnLine() {
        PlanException e = assertThrows(PlanException.class,
                () -> PlanParser.parseYaml(VALID.replace("alpha: 0.05", "alpha: 1.5").replace("control: control", "control: ctrl")));
        assertEquals("invalid stopping plan (2 problems):\n"
                + "  control: \"ctrl\" is not an arm of allocation (arms: control, treatment)\n"
                + "  primary.alpha: must be in (0, 1), got 1.5", e.getMessage());
    }

    static List<String> problems(String yaml) {
        try {
            PlanParser.parseYaml(yaml);
            return List.of();
        } catch (PlanException e) {
            return e.problems().stream().map(PlanProblem::toString).collect(Collectors.toList());
        }
    }

    @Test
    void problems_helperSeesAValidPlanAsValid() {
        assertEquals(List.of(), problems(VALID));
        assertNotEquals(List.of(), problems(VALID.replace("alpha: 0.05", "alpha: 5")));
    }
}
