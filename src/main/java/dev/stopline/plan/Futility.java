package dev.stopline.plan;

/**
 * A futility boundary obtained by spending beta, the type II error, over the same looks.
 *
 * @param spending beta-spending function, same grammar as alpha spending
 * @param beta     type II error to spend, in (0, 1); default 0.2 (80% power, common practice)
 * @param binding  whether the efficacy boundary is computed assuming the experiment always stops at
 *                 a futility crossing; default false (non-binding keeps alpha valid if a team continues)
 */
public record Futility(String spending, Double beta, Boolean binding) {
    /** Default beta, 80% power (common practice). */
    public static final double DEFAULT_BETA = 0.2;
}
