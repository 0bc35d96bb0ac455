package dev.stopline.simulate;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotEquals;

import dev.stopline.plan.Plan;
import java.util.List;
import org.junit.jupiter.api.Test;

/** Same seed, same output, whatever the thread count. */
class SimulationReproducibilityTest {
    private static String json(Plan plan, long seed, int threads) {
        RehearsalResult r = Rehearsal.of(plan).withTrials(30_000).withDataTrials(40).withSeed(seed).withThreads(threads)
                .run();
        return RehearsalJson.render(r, List.of());
    }

    @Test
    void sameSeed_sameOutput() {
        Plan plan = SimulationPlans.example("checkout-redesign");
        assertEquals(json(plan, 42, 2), json(plan, 42, 2));
    }

    @Test
    void differentThreadCounts_sameOutput() {
        Plan plan = SimulationPlans.example("checkout-redesign");
        // 30,000 trials make 4 z-scale chunks and 40 data-level trials 3 chunks: 1 and 3 threads interleave them differently.
        assertEquals(json(plan, 42, 1), json(plan, 42, 3));
    }

    @Test
    void differentSeeds_differentOutput() {
        Plan plan = SimulationPlans.example("checkout-redesign");
        assertNotEquals(json(plan, 42, 2), json(plan, 43, 2));
    }

    @Test
    void dataLevelOnlyPlan_sameSeedAndDifferentThreads_sameOutput() {
        Plan plan = SimulationPlans.example("gift-wrap-upsell");
        String a = RehearsalJson.render(Rehearsal.of(plan).withTrials(40).withSeed(5).withThreads(1).run(), List.of());
        String b = RehearsalJson.render(Rehearsal.of(plan).withTrials(40).withSeed(5).withThreads(2).run(), List.of());
        assertEquals(a, b);
    }
}
