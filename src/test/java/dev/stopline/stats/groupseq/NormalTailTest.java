package dev.stopline.stats.groupseq;

import static org.junit.jupiter.api.Assertions.assertTrue;

import org.apache.commons.math3.special.Erf;
import org.junit.jupiter.api.Test;

class NormalTailTest {
    /** Reference: Commons Math Erf.erfc, 1 - Phi(x) = erfc(x / sqrt 2) / 2. */
    private static double reference(double x) {
        return 0.5 * Erf.erfc(x / Math.sqrt(2));
    }

    @Test
    void upperTail_agreesWithCommonsMathToRelative1e12UpTo4AndRelative2e8UpTo37() {
        double worstNear = 0;
        double worstFar = 0;
        for (double x = -8; x <= 37; x += 0.0137) {
            double err = Math.abs(NormalTail.upper(x) - reference(x)) / reference(x);
            if (x <= 4) {
                worstNear = Math.max(worstNear, err);
            } else {
                worstFar = Math.max(worstFar, err);
            }
        }
        double near = worstNear;
        double far = worstFar;
        assertTrue(near < 1e-12, () -> "worst relative error x <= 4: " + near);
        // Hart is absolute-accurate; its relative error peaks near x = 8 (measured 8.7e-9, tail ~6e-16 there).
        assertTrue(far < 2e-8, () -> "worst relative error 4 < x <= 37: " + far);
    }

    @Test
    void lowerTail_isTheMirrorOfTheUpperTail() {
        for (double x = -10; x <= 10; x += 0.37) {
            double err = Math.abs(NormalTail.lower(x) - NormalTail.upper(-x));
            assertTrue(err == 0, "x = " + x + " error " + err);
            double sum = NormalTail.lower(x) + NormalTail.upper(x);
            assertTrue(Math.abs(sum - 1) < 1e-15, "Phi(x) + (1 - Phi(x)) - 1 = " + (sum - 1) + " at " + x);
        }
    }
}
