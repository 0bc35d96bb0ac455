package dev.stopline.simulate;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.stats.StatsException;
import java.io.IOException;
import java.nio.file.Path;
import java.time.LocalDate;
import java.util.Map;
import org.junit.jupiter.api.Test;

/** Traffic forecasts and the look calendar. */
class SimulationTrafficTest {
    @Test
    void exampleForecast_parses_andWeeklyPatternKeepsTheWeeklyAverage() throws IOException {
        TrafficForecast t = TrafficForecast.read(Path.of("simulations/traffic/bookshop-checkout.yaml"));
        assertEquals(LocalDate.of(2027, 3, 1), t.start());
        double week = 0;
        for (int d = 0; d < 7; d++) {
            week += t.expectedUnits(d);
        }
        assertEquals(9000, week / 7, 1e-9, "unitsPerDay is the weekly average (the file's own figure)");
        assertTrue(t.expectedUnits(5) > t.expectedUnits(1), "Saturday above Tuesday, as the file's pattern says");
        assertEquals(1850, t.metrics().get("page_load_ms").mean(), 0);
    }

    @Test
    void csvForecast_repeatsCyclically() {
        TrafficForecast t = TrafficForecast.parseCsv("date,units\n2027-03-01,100\n2027-03-02,300\n");
        assertEquals(100, t.expectedUnits(2), 0);
        assertEquals(300, t.expectedUnits(3), 0);
        assertEquals(LocalDate.of(2027, 3, 1), t.start());
    }

    @Test
    void badForecast_messageStatesTheRule() throws IOException {
        StatsException e = assertThrows(StatsException.class, () -> TrafficForecast.parseYaml("unitsPerDay: 9000\nweekly: [1, 2]\n"));
        assertTrue(e.getMessage().contains("7"), e.getMessage());
        StatsException k = assertThrows(StatsException.class, () -> TrafficForecast.parseYaml("unitsPerDay: 9000\nvisitors: 3\n"));
        assertTrue(k.getMessage().contains("unknown traffic key 'visitors'"), k.getMessage());
    }

    @Test
    void calendar_steadyTraffic_putsLooksOnTheDaysComputedByHand() {
        TrafficForecast t = TrafficForecast.weekly(LocalDate.of(2027, 3, 1), 9000, new double[] {1, 1, 1, 1, 1, 1, 1}, 0,
                Map.of());
        LookCalendar c = LookCalendar.of(ExperimentMonitor.of(SimulationPlans.example("checkout-redesign"), 1), t, 1, 50);
        // By hand: 60,000 per arm at 50/50 is 120,000 units; look k needs 24,000 k. After day d (1-based) there
        // are 9,000 d units: 24,000 / 48,000 / 72,000 / 96,000 / 120,000 are first reached on days 3, 6, 8
        // (exactly 72,000: a look is due when the fraction reaches its target), 11 and 14.
        LocalDate[] expected = {LocalDate.of(2027, 3, 3), LocalDate.of(2027, 3, 6), LocalDate.of(2027, 3, 8),
                LocalDate.of(2027, 3, 11), LocalDate.of(2027, 3, 14)};
        for (int k = 0; k < 5; k++) {
            LookCalendar.Entry e = c.entries().get(k);
            assertEquals(expected[k], e.expected(), "look " + (k + 1));
            assertEquals(expected[k], e.early(), "no variation: 10% = expected");
            assertEquals(expected[k], e.late(), "no variation: 90% = expected");
        }
    }
}
