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
        arms = Collections.unmodifiableSet(new LinkedHashSet<>(arms));
        metrics = Collections.unmodifiableSet(new LinkedHashSet<>(metrics));
    }
}
