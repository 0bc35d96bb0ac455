package dev.stopline.simulate;

import dev.stopline.plan.Plan;
import dev.stopline.plan.PlanParser;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Path;

/** Plans the simulation tests share: the shipped examples and small variants of them. */
final class SimulationPlans {
    private SimulationPlans() {
    }

    static Plan example(String name) {
        try {
            return PlanParser.parse(Path.of("config/plans", name + ".yaml"));
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        }
    }

    /** checkout-redesign without its futility boundary: a pure O'Brien-Fleming-type plan, 5 looks, alpha 0.05 two-sided. */
    static Plan obfWithoutFutility() {
        return PlanParser.parseYaml(String.join("\n",
                "experiment: checkout-obf",
                "allocation: {control: 0.5, treatment: 0.5}",
                "control: control",
                "primary: {metric: orders, type: proportion, method: group-sequential, alpha: 0.05, sides: 2,",
                "  spending: obrien-fleming, looks: 5, maxUnitsPerArm: 60000, baselineRate: 0.10, minimumEffect: 0.005}",
                ""));
    }

    /** A mean primary sized from power (80% at +0.15 EUR, sd 9.5), 4 looks, Pocock-type spending, one-sided. */
    static Plan meanSizedFromPower() {
        return PlanParser.parseYaml(String.join("\n",
                "experiment: recommendations-gs",
                "allocation: {control: 0.5, treatment: 0.5}",
                "control: control",
                "primary: {metric: revenue_per_visitor, type: mean, method: group-sequential, alpha: 0.025, sides: 1,",
                "  spending: pocock, looks: 4, power: 0.8, minimumEffect: 0.15, baselineMean: 2.40, sd: 9.5}",
                ""));
    }

    /** checkout-redesign sized from power instead of a maximum: 80% power at +0.005 with beta-spending futility. */
    static Plan proportionSizedFromPowerWithFutility() {
        return PlanParser.parseYaml(String.join("\n",
                "experiment: checkout-sized",
                "allocation: {control: 0.5, treatment: 0.5}",
                "control: control",
                "primary: {metric: orders, type: proportion, method: group-sequential, alpha: 0.05, sides: 2,",
                "  spending: obrien-fleming, looks: 5, power: 0.8, baselineRate: 0.10, minimumEffect: 0.005,",
                "  futility: {spending: \"power:2\", beta: 0.2, binding: false}}",
                ""));
    }
}
