package dev.stopline.plan;

import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.testing.PlanMutations;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.TestReporter;

/**
 * Property: a plan POSTed by anyone either parses or fails with a {@link PlanException} whose
 * problems all have text; no other exception escapes. Seeded byte-level and line-level mutations
 * of the shipped example plans.
 */
class PlanFuzzTest {
    private static final long SEED = 20261201L;
    private static final int CASES = 2_500;
    private static final String[] VALUES = {"-1", "0", "1", "1.5", ".nan", ".inf", "1e400", "null", "~", "[]", "{}",
            "\"\"", "yes", "'power:'", "[0.5, 0.2, 1]", "*undefined", "&a x", "!!binary AAAA", "|\n  x"};

    @Test
    void mutatedPlans_parseOrRaisePlanException_only(TestReporter report) throws Exception {
        List<byte[]> bases = new ArrayList<>();
        try (var files = Files.list(Path.of("config", "plans"))) {
            for (Path p : files.filter(f -> f.toString().endsWith(".yaml")).sorted().toList()) {
                bases.add(Files.readAllBytes(p));
            }
        }
        bases.add(PlanParserTest.VALID.getBytes(StandardCharsets.UTF_8));
        SplittableRandom rnd = new SplittableRandom(SEED);
        int valid = 0;
        int invalid = 0;
        for (int i = 0; i < CASES; i++) {
            byte[] base = bases.get(rnd.nextInt(bases.size()));
            byte[] doc = rnd.nextBoolean() ? PlanMutations.bytes(base, rnd)
                    : PlanMutations.yamlValue(new String(base, StandardCharsets.UTF_8), rnd, VALUES);
            try {
                PlanParser.parse(doc, rnd.nextInt(4) == 0 ? PlanParser.Format.JSON : PlanParser.Format.AUTO);
                valid++;
            } catch (PlanException e) {
                assertFalse(e.problems().isEmpty());
                assertTrue(e.problems().stream().noneMatch(p -> p.rule().isBlank()), e::getMessage);
                invalid++;
            }
        }
        report.publishEntry("planFuzz", "seed " + SEED + ": " + valid + " still valid, " + invalid + " rejected");
        assertTrue(valid > 0 && invalid > CASES / 2, valid + " valid, " + invalid + " invalid");
    }

}
