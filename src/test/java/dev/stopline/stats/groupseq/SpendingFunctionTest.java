package dev.stopline.stats.groupseq;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.stats.StatsException;
import org.apache.commons.math3.distribution.NormalDistribution;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;

class SpendingFunctionTest {
    private static final NormalDistribution STD = new NormalDistribution(0, 1);
    /** Closed-form values recomputed with Commons Math: agreement to a few ulps of relative error. */
    private static final double FORMULA_REL_TOL = 1e-12;

    private static void assertRel(double expected, double actual, double relTol, String what) {
        double err = Math.abs(actual - expected) / Math.abs(expected);
        assertTrue(err <= relTol, () -> what + ": expected " + expected + " got " + actual + " rel error " + err);
    }

    @Test
    void obrienFlemingType_matchesLanDeMetsFormulaEvaluatedWithCommonsMath() {
        SpendingFunction f = SpendingFunction.obrienFlemingType(0.025);
        double z = STD.inverseCumulativeProbability(1 - 0.0125); // z_{1-alpha/2}, Commons Math
        for (double t : new double[] {0.05, 0.2, 0.5, 0.9}) {
            double expected = 2 * STD.cumulativeProbability(-z / Math.sqrt(t)); // Lan & DeMets (1983), 2 - 2 Phi(x) = 2 Phi(-x)
            assertRel(expected, f.cumulative(t), 1e-9, "OBF alpha(" + t + ")");
        }
    }

    @Test
    void obrienFlemingType_keepsRelativePrecisionAtTinyFractions() {
        // 2 - 2 Phi(z/sqrt t) computed by subtraction would be 0 here; the upper tail keeps it.
        double tiny = SpendingFunction.obrienFlemingType(0.025).cumulative(0.01);
        double z = STD.inverseCumulativeProbability(1 - 0.0125);
        // Commons Math complementary error function: 2 (1 - Phi(x)) = erfc(x / sqrt 2)
        double expected = org.apache.commons.math3.special.Erf.erfc(z / Math.sqrt(0.01) / Math.sqrt(2));
        assertTrue(tiny > 0);
        assertRel(expected, tiny, 1e-9, "OBF alpha(0.01)");
    }

    @Test
    void pocockType_matchesLanDeMetsFormula() {
        SpendingFunction f = SpendingFunction.pocockType(0.05);
        // alpha ln(1 + (e - 1) t) at t = 0.5: 0.05 * ln(1.859140914) (Lan & DeMets 1983 formula)
        assertRel(0.05 * Math.log(1 + (Math.E - 1) * 0.5), f.cumulative(0.5), FORMULA_REL_TOL, "Pocock alpha(0.5)");
    }

    @Test
    void hwangShihDeCani_matchesFormulaAndReducesToLinearAtGammaZero() {
        SpendingFunction f = SpendingFunction.hwangShihDeCani(0.025, -4);
        // Hwang, Shih & DeCani (1990): alpha (1 - e^{-gamma t}) / (1 - e^{-gamma})
        double expected = 0.025 * (1 - Math.exp(4 * 0.5)) / (1 - Math.exp(4));
        assertRel(expected, f.cumulative(0.5), FORMULA_REL_TOL, "HSD(-4) alpha(0.5)");
        assertEquals(0.025 * 0.3, SpendingFunction.hwangShihDeCani(0.025, 0).cumulative(0.3), 1e-17, "gamma = 0 is linear");
        // Continuity at gamma -> 0: the formula tends to alpha t (common practice check of expm1 use).
        assertRel(0.025 * 0.3, SpendingFunction.hwangShihDeCani(0.025, 1e-9).cumulative(0.3), 1e-8, "gamma = 1e-9");
    }

    @Test
    void powerFamily_matchesKimDeMetsFormula() {
        // Kim & DeMets (1987): alpha t^rho
        assertRel(0.05 * Math.pow(0.4, 3), SpendingFunction.power(0.05, 3).cumulative(0.4), FORMULA_REL_TOL, "power:3");
    }

    @ParameterizedTest
    @ValueSource(strings = {"obrien-fleming", "pocock", "hwang-shih-decani:-4", "hwang-shih-decani:1", "power:3", "power:0.5"})
    void everyFamily_startsAtZeroEndsAtAlphaAndIncreases(String spec) {
        SpendingFunction f = SpendingFunction.of(spec, 0.05);
        assertEquals(0.0, f.cumulative(0), "alpha(0)");
        assertEquals(0.0, f.cumulative(-1), "alpha(t < 0)");
        assertEquals(0.05, f.cumulative(1), "alpha(1)");
        assertEquals(0.05, f.cumulative(1.3), "alpha(t > 1), overrun look spends everything");
        double previous = 0;
        for (int i = 1; i <= 1000; i++) {
            double v = f.cumulative(i / 1000.0);
            assertTrue(v >= previous, spec + " decreases at t = " + i / 1000.0);
            previous = v;
        }
        assertEquals(0.05, previous, 1e-15, "alpha(1) reached continuously");
    }

    @ParameterizedTest
    @ValueSource(strings = {"obrien-fleming", "pocock", "hwang-shih-decani:-4", "hwang-shih-decani:0.5", "power:3"})
    void spec_roundTripsThroughParser(String spec) {
        SpendingFunction f = SpendingFunction.of(spec, 0.025);
        assertEquals(spec, f.spec());
        assertEquals(f, SpendingFunction.of(f.spec(), 0.025));
    }

    @Test
    void parser_ignoresCaseAndBlanks() {
        assertEquals(SpendingFunction.hwangShihDeCani(0.05, -4), SpendingFunction.of("  Hwang-Shih-DeCani: -4 ", 0.05));
    }

    @ParameterizedTest
    @ValueSource(strings = {"", "obf", "pocock:2", "power", "power:", "power:abc", "hwang-shih-decani"})
    void parser_rejectsBadSpecsWithTheGrammarInTheMessage(String spec) {
        StatsException e = assertThrows(StatsException.class, () -> SpendingFunction.of(spec, 0.05));
        assertTrue(e.getMessage().contains(SpendingFunction.GRAMMAR), e.getMessage());
    }

    @Test
    void badParameters_failWithTheRule() {
        assertTrue(assertThrows(StatsException.class, () -> SpendingFunction.power(0.05, 0)).getMessage().contains("> 0"));
        assertTrue(assertThrows(StatsException.class, () -> SpendingFunction.power(0.05, Double.NaN)).getMessage().contains("> 0"));
        assertTrue(assertThrows(StatsException.class, () -> SpendingFunction.hwangShihDeCani(0.05, 21)).getMessage().contains("<= 20"));
        for (double a : new double[] {0, 1, -0.1, 1.5, Double.NaN}) {
            StatsException e = assertThrows(StatsException.class, () -> SpendingFunction.pocockType(a));
            assertTrue(e.getMessage().contains("not in (0, 1)"), e.getMessage());
        }
        assertThrows(StatsException.class, () -> SpendingFunction.pocockType(0.05).cumulative(Double.NaN));
    }

    @Test
    void withAlpha_keepsFamilyAndParameter() {
        SpendingFunction f = SpendingFunction.of("power:2", 0.05).withAlpha(0.2);
        assertEquals("power:2", f.spec());
        assertEquals(0.2, f.alpha());
    }
}
