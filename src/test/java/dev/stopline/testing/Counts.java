package dev.stopline.testing;

import java.util.Locale;

/** Wire-format snapshots of a two-arm proportion experiment, for tests. Invented numbers. */
public final class Counts {
    private Counts() {
    }

    /** A snapshot with one 0/1 metric {@code metric}; sum = sumOfSquares = successes. */
    public static String proportion(String experiment, long sequence, String metric, long controlUnits,
                                    long controlSuccesses, long treatmentUnits, long treatmentSuccesses) {
        return String.format(Locale.ROOT, "{\"experiment\":\"%s\",\"sequence\":%d,\"observedAt\":\"2027-03-01T%02d:00:00Z\","
                        + "\"arms\":{\"control\":{\"units\":%d,\"metrics\":{\"%s\":{\"sum\":%d,\"sumOfSquares\":%d}}},"
                        + "\"treatment\":{\"units\":%d,\"metrics\":{\"%s\":{\"sum\":%d,\"sumOfSquares\":%d}}}}}",
                experiment, sequence, sequence % 24, controlUnits, metric, controlSuccesses, controlSuccesses,
                treatmentUnits, metric, treatmentSuccesses, treatmentSuccesses);
    }

    /** A minimal group-sequential plan on a 0/1 metric {@code orders}: OBF-type, 5 looks, 10,000 units per arm. */
    public static String plan(String experiment) {
        return "experiment: " + experiment + "\n"
                + "allocation: {control: 0.5, treatment: 0.5}\n"
                + "control: control\n"
                + "primary:\n"
                + "  metric: orders\n"
                + "  type: proportion\n"
                + "  method: group-sequential\n"
                + "  alpha: 0.05\n"
                + "  sides: 2\n"
                + "  spending: obrien-fleming\n"
                + "  looks: 5\n"
                + "  maxUnitsPerArm: 10000\n"
                + "  baselineRate: 0.10\n"
                + "sampleRatio: {alpha: 0.001}\n";
    }
}
