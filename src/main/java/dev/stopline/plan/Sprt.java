package dev.stopline.plan;

/**
 * Wald's SPRT of "no difference" against "difference = minimumEffect", on the normal
 * approximation of the difference of arm means (Wald 1947).
 *
 * @param minimumEffect the alternative, absolute on the metric's scale, &gt; 0
 * @param beta          type II error at that alternative, in (0, 1)
 */
public record Sprt(Double minimumEffect, Double beta) {
}
