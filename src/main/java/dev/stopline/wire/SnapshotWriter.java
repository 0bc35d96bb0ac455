package dev.stopline.wire;

import java.util.Map;

/**
 * Writes a snapshot in the wire format that {@link SnapshotParser} reads: for producers in this
 * project (the demo feeder, recorded scenario streams, tests). Numbers are written with Java's
 * shortest round-trip representation, so parsing the output gives back the same doubles.
 */
public final class SnapshotWriter {
    private SnapshotWriter() {
    }

    public static String toJson(Snapshot s) {
        StringBuilder b = new StringBuilder(256);
        b.append("{\"experiment\":").append(quote(s.experiment()))
                .append(",\"sequence\":").append(s.sequence())
                .append(",\"observedAt\":").append(quote(s.observedAt().toString()))
                .append(",\"arms\":{");
        boolean firstArm = true;
        for (Map.Entry<String, ArmCounts> arm : s.arms().entrySet()) {
            b.append(firstArm ? "" : ",").append(quote(arm.getKey())).append(":{\"units\":")
                    .append(arm.getValue().units()).append(",\"metrics\":{");
            firstArm = false;
            boolean firstMetric = true;
            for (Map.Entry<String, MetricSums> m : arm.getValue().metrics().entrySet()) {
                MetricSums v = m.getValue();
                b.append(firstMetric ? "" : ",").append(quote(m.getKey())).append(":{\"sum\":").append(number(v.sum()))
                        .append(",\"sumOfSquares\":").append(number(v.sumOfSquares()));
                if (v.isRatio()) {
                    b.append(",\"denominatorSum\":").append(number(v.ratio().denominatorSum()))
                            .append(",\"denominatorSumOfSquares\":").append(number(v.ratio().denominatorSumOfSquares()))
                            .append(",\"sumOfProducts\":").append(number(v.ratio().sumOfProducts()));
                }
                b.append('}');
                firstMetric = false;
            }
            b.append("}}");
        }
        return b.append("}}").toString();
    }

    private static String number(double x) {
        return x == Math.rint(x) && Math.abs(x) < 1e15 ? Long.toString((long) x) : Double.toString(x);
    }

    private static String quote(String s) {
        StringBuilder b = new StringBuilder(s.length() + 2).append('"');
        for (char c : s.toCharArray()) {
            if (c == '"' || c == '\\') {
                b.append('\\').append(c);
            } else if (c < 0x20) {
                b.append(String.format("\\u%04x", (int) c));
            } else {
                b.append(c);
            }
        }
        return b.append('"').toString();
    }
}
