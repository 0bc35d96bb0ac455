package dev.stopline.plan;

import java.util.ArrayList;
import java.util.List;

/**
 * Planned looks as information fractions t_1 &lt; ... &lt; t_K = 1. Written in a plan either as a list
 * ({@code [0.2, 0.5, 1.0]}) or as an integer K, meaning K equally spaced looks t_k = k/K.
 *
 * @param fractions the information fractions, in the order given
 */
public record Looks(List<Double> fractions) {
    /** Largest number of looks a plan may ask for; more looks than this is a typo, not a design. */
    public static final int MAX_LOOKS = 100;

    /** Relative tolerance when deciding whether looks are equally spaced or end at 1. */
    static final double SPACING_TOLERANCE = 1e-9;

    public Looks {
        fractions = List.copyOf(fractions);
    }

    /** K equally spaced looks, t_k = k/K (the division is exact to the last bit, so 3/5 == 0.6). */
    public static Looks equallySpaced(int k) {
        List<Double> t = new ArrayList<>(k);
        for (int i = 1; i <= k; i++) {
            t.add(i / (double) k);
        }
        return new Looks(t);
    }

    /** The number of looks K. */
    public int count() {
        return fractions.size();
    }

    /** Whether t_k = k/K for every k, within {@value #SPACING_TOLERANCE}. */
    public boolean isEquallySpaced() {
        int k = fractions.size();
        for (int i = 0; i < k; i++) {
            if (Math.abs(fractions.get(i) - (i + 1) / (double) k) > SPACING_TOLERANCE) {
                return false;
            }
        }
        return k > 0;
    }
}
