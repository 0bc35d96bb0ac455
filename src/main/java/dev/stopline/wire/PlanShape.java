package dev.stopline.wire;

import java.util.Collections;
import java.util.LinkedHashSet;
import java.util.Set;

/**
 * What a plan expects in every snapshot of its experiment: the arm names and the metric names each
 * arm must carry. Plain sets, so this package does not depend on the plan model; build one with
 * {@code new PlanShape(plan.arms(), plan.metrics())}.
 *
 * @param arms    the arms of the allocation
 * @param metrics the primary metric and the guardrail metrics
 */
public record PlanShape(Set<String> arms, Set<String> metrics) {
    public PlanShape {
        arms = interned(arms);
        metrics = interned(metrics);
    }

    /**
     * The names as canonical strings: the snapshot reader's names are Jackson's interned field names,
     * so every per-snapshot comparison with the plan ends at the identity check in {@code String.equals}.
     */
    private static Set<String> interned(Set<String> names) {
        Set<String> out = new LinkedHashSet<>();
        for (String n : names) {
            out.add(n.intern());
        }
        return Collections.unmodifiableSet(out);
    }
}
