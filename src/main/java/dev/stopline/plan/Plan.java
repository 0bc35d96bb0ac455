package dev.stopline.plan;

import java.util.Collections;
import java.util.LinkedHashMap;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;

/**
 * A stopping plan: which experiment, how units are split, which arm is the control, the primary
 * metric with its sequential test, the guardrails and the sample-ratio check.
 *
 * <p>The record is immutable but deliberately permissive: a component that was missing or had the
 * wrong type in the source document is {@code null}, so that {@link PlanValidator} can report every
 * problem at once. A plan returned by {@link PlanParser} has passed {@link PlanValidator}; then every
 * required component is non-null and every default is filled in.
 *
 * @param experiment  experiment id, {@code [a-z0-9][a-z0-9._-]{0,127}}; the Kafka key of its snapshots
 * @param allocation  planned share of units per arm, in document order; weights sum to 1
 * @param control     the arm the others are compared with
 * @param primary     the metric that decides the experiment
 * @param guardrails  metrics that may stop the experiment for harm, never declare success; may be empty
 * @param sampleRatio the sample-ratio-mismatch check (always on; null means the default, alpha 0.001)
 * @param description free text, optional
 * @param owner       who to ask, optional
 */
public record Plan(
        String experiment,
        Map<String, Double> allocation,
        String control,
        Primary primary,
        List<Guardrail> guardrails,
        SampleRatio sampleRatio,
        String description,
        String owner) {

    public Plan {
        allocation = allocation == null ? null : Collections.unmodifiableMap(new LinkedHashMap<>(allocation));
        guardrails = guardrails == null ? List.of() : List.copyOf(guardrails);
        sampleRatio = sampleRatio == null ? SampleRatio.defaults() : sampleRatio;
    }

    /** The arm names, in allocation order. */
    public Set<String> arms() {
        return allocation == null ? Set.of() : Collections.unmodifiableSet(new LinkedHashSet<>(allocation.keySet()));
    }

    /** Every metric a snapshot must carry: the primary metric, then the guardrail metrics. */
    public Set<String> metrics() {
        Set<String> names = new LinkedHashSet<>();
        if (primary != null && primary.metric() != null) {
            names.add(primary.metric());
        }
        guardrails.forEach(g -> names.add(g.metric()));
        names.remove(null);
        return Collections.unmodifiableSet(names);
    }
}
