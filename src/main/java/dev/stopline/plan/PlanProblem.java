package dev.stopline.plan;

import java.util.Objects;

/**
 * One broken rule in a stopping plan: where ({@code primary.alpha}, {@code guardrails[1].margin},
 * {@code (document)} for the whole file) and what rule, with the offending value when there is one.
 * {@link #toString()} is the line shown to a user: {@code primary.alpha: must be in (0, 1), got 1.5}.
 *
 * @param path dotted path of the offending key, list items as {@code [i]}
 * @param rule the rule that was broken, stated so that the user can act on it
 */
public record PlanProblem(String path, String rule) {
    /** Path used for problems of the whole document (syntax, size, root type). */
    public static final String DOCUMENT = "(document)";

    public PlanProblem {
        Objects.requireNonNull(path, "path");
        Objects.requireNonNull(rule, "rule");
    }

    @Override
    public String toString() {
        return path + ": " + rule;
    }
}
