package dev.stopline.service.support;

import dev.stopline.monitor.LookRecord;
import dev.stopline.monitor.Monitoring;
import io.micrometer.core.instrument.Counter;
import io.micrometer.core.instrument.Gauge;
import io.micrometer.core.instrument.MeterRegistry;
import io.micrometer.core.instrument.Timer;
import jakarta.enterprise.context.ApplicationScoped;
import jakarta.inject.Inject;
import java.util.Map;
import java.util.concurrent.ConcurrentHashMap;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicLong;

/**
 * Stopline's Prometheus metrics. Micrometer names map to Prometheus conventions:
 * {@code stopline.looks} is exported as {@code stopline_looks_total}.
 * <ul>
 *   <li>{@code stopline_snapshots_total{outcome}}: evaluated, duplicate, redelivered</li>
 *   <li>{@code stopline_looks_total{role}}: metric evaluations stored (primary formal looks, guardrail checks)</li>
 *   <li>{@code stopline_alerts_total{kind}}: alerts raised (first time only)</li>
 *   <li>{@code stopline_dead_letters_total{reason}}: records sent to the dead-letter topic</li>
 *   <li>{@code stopline_evaluation_seconds}: parse, check, evaluate and store one snapshot</li>
 *   <li>{@code stopline_information_fraction{experiment}} and {@code stopline_z{experiment,metric}}: per live experiment</li>
 * </ul>
 */
@ApplicationScoped
public class StoplineMetrics {
    private final MeterRegistry registry;
    private final Timer evaluation;
    private final Map<String, AtomicLong> fractions = new ConcurrentHashMap<>();
    private final Map<String, AtomicLong> zs = new ConcurrentHashMap<>();
    /** Counters by name and tag value: registering is a lookup with allocation, done once per series. */
    private final Map<String, Counter> counters = new ConcurrentHashMap<>();

    @Inject
    public StoplineMetrics(MeterRegistry registry) {
        this.registry = registry;
        this.evaluation = Timer.builder("stopline.evaluation").description("time to evaluate and store one snapshot")
                .publishPercentiles(0.5, 0.99).register(registry);
    }

    public void snapshot(String outcome) {
        counter("stopline.snapshots", "outcome", outcome).increment();
    }

    public void deadLetter(String reason) {
        counter("stopline.dead_letters", "reason", reason).increment();
    }

    public void alert(String kind) {
        counter("stopline.alerts", "kind", kind).increment();
    }

    private Counter counter(String name, String tag, String value) {
        return counters.computeIfAbsent(name + '|' + value,
                k -> Counter.builder(name).tag(tag, value).register(registry));
    }

    public void evaluated(Monitoring.Evaluated e, long nanos) {
        snapshot("evaluated");
        evaluation.record(nanos, TimeUnit.NANOSECONDS);
        String experiment = e.snapshot().experiment();
        for (LookRecord l : e.evaluation().looks()) {
            counter("stopline.looks", "role", l.role()).increment();
            if (l.z() != null) {
                gauge(zs, "stopline.z", experiment, l.metric()).set(Double.doubleToLongBits(l.z()));
            }
            gauge(fractions, "stopline.information_fraction", experiment, null)
                    .set(Double.doubleToLongBits(l.informationFraction()));
        }
    }

    private AtomicLong gauge(Map<String, AtomicLong> map, String name, String experiment, String metric) {
        return map.computeIfAbsent(experiment + "|" + metric, k -> {
            AtomicLong bits = new AtomicLong(Double.doubleToLongBits(Double.NaN));
            Gauge.Builder<AtomicLong> b = Gauge.builder(name, bits, a -> Double.longBitsToDouble(a.get()))
                    .tag("experiment", experiment);
            if (metric != null) {
                b.tag("metric", metric);
            }
            b.register(registry);
            return bits;
        });
    }
}
