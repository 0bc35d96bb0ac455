package dev.stopline.wire;

import com.fasterxml.jackson.core.JsonFactory;
import com.fasterxml.jackson.core.JsonParser;
import com.fasterxml.jackson.core.JsonToken;
import com.fasterxml.jackson.core.StreamReadFeature;
import java.io.IOException;
import java.time.DateTimeException;
import java.time.Instant;
import java.util.LinkedHashMap;
import java.util.Map;

/**
 * The parse of a well-formed, valid snapshot in one pass over the tokens, without building a JSON
 * tree: the common case of the daemon's ingest path (the tree, its maps and the name patterns were
 * about a third of the ingest CPU in a flight recording of the ingest benchmark).
 *
 * <p>It answers only "here is the snapshot" or "not sure" (null). On anything unusual, whether
 * invalid input or merely an uncommon but valid form (units written as {@code 5.0}, {@code metrics}
 * before {@code units}, a number beyond a long), it returns null and {@link SnapshotParser} takes its
 * full path, which decides the rejection and its reason. So the set of accepted snapshots and their
 * values are those of the full path by construction; {@code SnapshotFastReaderTest} checks that both
 * give the same result on seeded valid and mutated records.
 */
final class SnapshotFastReader {
    private final JsonFactory factory;

    /**
     * @param factory the full path's factory: same limits and number features. Its duplicate-name
     *     detection is switched off here (a detector object per JSON object, a few per cent of the
     *     ingest): this reader finds a repeated name itself and leaves the record to the full path.
     */
    SnapshotFastReader(JsonFactory factory) {
        this.factory = factory.rebuild().disable(StreamReadFeature.STRICT_DUPLICATE_DETECTION).build();
    }

    /** The snapshot, or null when the full path must decide. {@code value} is non-empty and within the limit. */
    Snapshot read(byte[] value, String key) {
        try (JsonParser p = factory.createParser(value)) {
            Snapshot s = root(p);
            if (s == null || p.nextToken() != null) { // FAIL_ON_TRAILING_TOKENS of the full path
                return null;
            }
            return key == null || key.equals(s.experiment()) ? s : null;
        } catch (IOException | RuntimeException e) {
            return null;
        }
    }

    private static Snapshot root(JsonParser p) throws IOException {
        if (p.nextToken() != JsonToken.START_OBJECT) {
            return null;
        }
        String experiment = null;
        long sequence = -1;
        Instant observedAt = null;
        LinkedHashMap<String, ArmCounts> arms = null;
        JsonToken t;
        while ((t = p.nextToken()) == JsonToken.FIELD_NAME) {
            String field = p.currentName();
            JsonToken v = p.nextToken();
            if (field.equals("experiment") && experiment != null || field.equals("sequence") && sequence >= 0
                    || field.equals("observedAt") && observedAt != null || field.equals("arms") && arms != null) {
                return null;                                         // a repeated name
            }
            switch (field) {
                case "experiment" -> experiment = v == JsonToken.VALUE_STRING && isName(p.getText(), true) ? p.getText() : null;
                case "sequence" -> sequence = wholeOrMinusOne(p, v, Long.MAX_VALUE);
                case "observedAt" -> observedAt = v == JsonToken.VALUE_STRING ? instant(p.getText()) : null;
                case "arms" -> arms = v == JsonToken.START_OBJECT ? arms(p) : null;
                default -> {
                    return null;
                }
            }
            if (experiment == null && field.equals("experiment") || sequence < 0 && field.equals("sequence")
                    || observedAt == null && field.equals("observedAt") || arms == null && field.equals("arms")) {
                return null;
            }
        }
        if (t != JsonToken.END_OBJECT || experiment == null || sequence < 0 || observedAt == null || arms == null) {
            return null;
        }
        return new Snapshot(experiment, sequence, observedAt, ReadOnlyMap.adopt(arms));
    }

    private static LinkedHashMap<String, ArmCounts> arms(JsonParser p) throws IOException {
        LinkedHashMap<String, ArmCounts> arms = new LinkedHashMap<>(4);
        JsonToken t;
        while ((t = p.nextToken()) == JsonToken.FIELD_NAME) {
            String name = p.currentName();
            if (!isName(name, false) || p.nextToken() != JsonToken.START_OBJECT) {
                return null;
            }
            ArmCounts arm = arm(p);
            if (arm == null) {
                return null;
            }
            if (arms.put(name, arm) != null) {
                return null;                                         // a repeated arm
            }
        }
        return t == JsonToken.END_OBJECT && !arms.isEmpty() ? arms : null;
    }

    /** {@code units} first, then {@code metrics} (the order producers write; any other goes the full path). */
    private static ArmCounts arm(JsonParser p) throws IOException {
        if (p.nextToken() != JsonToken.FIELD_NAME || !"units".equals(p.currentName())) {
            return null;
        }
        long units = wholeOrMinusOne(p, p.nextToken(), (long) SnapshotParser.ABSURD);
        if (units < 0 || p.nextToken() != JsonToken.FIELD_NAME || !"metrics".equals(p.currentName())
                || p.nextToken() != JsonToken.START_OBJECT) {
            return null;
        }
        LinkedHashMap<String, MetricSums> metrics = new LinkedHashMap<>(4);
        JsonToken t;
        while ((t = p.nextToken()) == JsonToken.FIELD_NAME) {
            String name = p.currentName();
            if (!isName(name, false) || p.nextToken() != JsonToken.START_OBJECT) {
                return null;
            }
            MetricSums m = metric(p, units);
            if (m == null) {
                return null;
            }
            if (metrics.put(name, m) != null) {
                return null;                                         // a repeated metric
            }
        }
        return t == JsonToken.END_OBJECT && p.nextToken() == JsonToken.END_OBJECT ? new ArmCounts(units, ReadOnlyMap.adopt(metrics)) : null;
    }

    private static MetricSums metric(JsonParser p, long units) throws IOException {
        double sum = Double.NaN;
        double sumSq = Double.NaN;
        double den = Double.NaN;
        double denSq = Double.NaN;
        double prod = Double.NaN;
        JsonToken t;
        while ((t = p.nextToken()) == JsonToken.FIELD_NAME) {
            String field = p.currentName();
            if (!Double.isNaN(switch (field) {
                case "sum" -> sum;
                case "sumOfSquares" -> sumSq;
                case "denominatorSum" -> den;
                case "denominatorSumOfSquares" -> denSq;
                case "sumOfProducts" -> prod;
                default -> Double.NaN;
            })) {
                return null;                                         // a repeated field
            }
            double v = amount(p, p.nextToken(), field.endsWith("Sum") || field.equals("sum")
                    ? SnapshotParser.ABSURD : SnapshotParser.ABSURD_SQUARED);
            switch (field) {
                case "sum" -> sum = v;
                case "sumOfSquares" -> sumSq = v;
                case "denominatorSum" -> den = v;
                case "denominatorSumOfSquares" -> denSq = v;
                case "sumOfProducts" -> prod = v;
                default -> {
                    return null;
                }
            }
            if (Double.isNaN(v)) {
                return null;
            }
        }
        if (t != JsonToken.END_OBJECT || Double.isNaN(sum) || Double.isNaN(sumSq) || !secondMomentOk(sumSq, sum, units)) {
            return null;
        }
        int ratioFields = (Double.isNaN(den) ? 0 : 1) + (Double.isNaN(denSq) ? 0 : 1) + (Double.isNaN(prod) ? 0 : 1);
        if (ratioFields == 0) {
            return MetricSums.of(sum, sumSq);
        }
        if (ratioFields < 3 || !secondMomentOk(denSq, den, units)
                || prod * prod > sumSq * denSq * (1 + SnapshotParser.REL_SLACK) + 1e-9) {
            return null;
        }
        return new MetricSums(sum, sumSq, new RatioSums(den, denSq, prod));
    }

    /** The rule of {@code SnapshotParser.secondMoment}, as a test. */
    private static boolean secondMomentOk(double sumSq, double sum, long units) {
        if (units == 0) {
            return sum == 0 && sumSq == 0;
        }
        return !(sum * (sum / units) > sumSq * (1 + SnapshotParser.REL_SLACK) + 1e-9);
    }

    /** A finite number in [0, max], else NaN. */
    private static double amount(JsonParser p, JsonToken t, double max) throws IOException {
        if (t != JsonToken.VALUE_NUMBER_INT && t != JsonToken.VALUE_NUMBER_FLOAT || p.isNaN()) {
            return Double.NaN;
        }
        double d = p.getDoubleValue();
        return d >= 0 && d <= max ? d : Double.NaN;
    }

    /** An integer token that fits a long, in [0, max]; else -1. */
    private static long wholeOrMinusOne(JsonParser p, JsonToken t, long max) throws IOException {
        if (t != JsonToken.VALUE_NUMBER_INT) {
            return -1;
        }
        JsonParser.NumberType type = p.getNumberType();
        if (type != JsonParser.NumberType.INT && type != JsonParser.NumberType.LONG) {
            return -1;
        }
        long v = p.getLongValue();
        return v >= 0 && (double) v <= (double) max ? v : -1;
    }

    private static Instant instant(String s) {
        try {
            return SnapshotParser.dateTime(s);
        } catch (DateTimeException e) {
            return null;
        }
    }

    /**
     * {@link SnapshotParser#EXPERIMENT_ID} ({@code lowerOnly}) or {@link SnapshotParser#NAME}, without a
     * regex: 1 to 128 characters, the first a letter or digit, the rest also {@code . _ -}.
     */
    static boolean isName(String s, boolean lowerOnly) {
        int n = s.length();
        if (n < 1 || n > 128) {
            return false;
        }
        for (int i = 0; i < n; i++) {
            char c = s.charAt(i);
            boolean ok = c >= 'a' && c <= 'z' || c >= '0' && c <= '9' || !lowerOnly && c >= 'A' && c <= 'Z'
                    || i > 0 && (c == '.' || c == '_' || c == '-');
            if (!ok) {
                return false;
            }
        }
        return true;
    }
}
