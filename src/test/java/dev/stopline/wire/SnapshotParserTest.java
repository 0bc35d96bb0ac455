package dev.stopline.wire;

import static dev.stopline.wire.Records.VALID;
import static dev.stopline.wire.Records.bytes;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertInstanceOf;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.time.Instant;
import java.util.Locale;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.TestReporter;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.Arguments;
import org.junit.jupiter.params.provider.MethodSource;

class SnapshotParserTest {
    private final SnapshotParser parser = SnapshotParser.withDefaults();

    @Test
    void referenceRecord_parsesToItsValues() {
        Snapshot s = assertInstanceOf(Snapshot.class, parser.parse(bytes(VALID), "checkout-redesign"));
        assertEquals("checkout-redesign", s.experiment());
        assertEquals(42, s.sequence());
        assertEquals(Instant.parse("2027-03-04T10:00:00Z"), s.observedAt());
        assertEquals(new ArmCounts(10234, java.util.Map.of("orders", MetricSums.of(812, 812))), s.arms().get("control"));
        assertEquals(new ArmCounts(10187, java.util.Map.of("orders", MetricSums.of(861, 861))), s.arms().get("treatment"));
    }

    @Test
    void ratioMetric_carriesItsDenominatorSums() {
        Snapshot s = assertInstanceOf(Snapshot.class, parser.parse(bytes(Records.withRatio(43, 20000, 1600))));
        MetricSums basket = s.arms().get("control").metrics().get("basket_value");
        assertEquals(new RatioSums(1600, 1600, 1600 * 31.5), basket.ratio());
        assertEquals(false, s.arms().get("control").metrics().get("orders").isRatio());
    }

    @Test
    void offsetTimestamp_isNormalisedToAnInstant() {
        Snapshot s = assertInstanceOf(Snapshot.class, parser.parse(bytes(VALID.replace("10:00:00Z", "11:00:00+01:00"))));
        assertEquals(Instant.parse("2027-03-04T10:00:00Z"), s.observedAt());
    }

    @Test
    void wholeNumberWrittenAsDouble_isAcceptedAsUnits() {
        // some producers (JavaScript) write every number as a double
        Snapshot s = assertInstanceOf(Snapshot.class, parser.parse(bytes(VALID.replace("10234", "10234.0"))));
        assertEquals(10234, s.arms().get("control").units());
    }

    static Stream<Arguments> badRecords() {
        return Stream.of(
                // malformed-json
                bad(VALID.substring(0, VALID.length() - 3), Reason.MALFORMED_JSON, "Unexpected end-of-input"),
                bad("", Reason.MALFORMED_JSON, "empty payload"),
                bad("   \n", Reason.MALFORMED_JSON, "no JSON value"),
                bad(VALID.replace("\"sequence\":42", "\"sequence\":42,\"sequence\":43"), Reason.MALFORMED_JSON, "Duplicate field 'sequence'"),
                // each kind of repeated name, also caught by the one-pass reader (which hands them to the full path)
                bad(VALID.replace("\"experiment\":", "\"experiment\":\"x\",\"experiment\":"), Reason.MALFORMED_JSON,
                        "Duplicate field 'experiment'"),
                bad(VALID.replace("\"arms\":{", "\"arms\":{\"control\":{\"units\":1,\"metrics\":{\"orders\":{\"sum\":0,"
                        + "\"sumOfSquares\":0}}},"), Reason.MALFORMED_JSON, "Duplicate field 'control'"),
                bad(VALID.replaceFirst("\"metrics\":\\{", "\"metrics\":{\"orders\":{\"sum\":0,\"sumOfSquares\":0},"),
                        Reason.MALFORMED_JSON, "Duplicate field 'orders'"),
                bad(VALID.replace("\"sum\":812,", "\"sum\":812,\"sum\":812,"), Reason.MALFORMED_JSON, "Duplicate field 'sum'"),
                bad(VALID + "{}", Reason.MALFORMED_JSON, "Trailing token"),
                bad("{'experiment':'checkout-redesign'}", Reason.MALFORMED_JSON, "Unexpected character"),
                // schema
                bad("[1,2]", Reason.SCHEMA, "/: must be an object, got array"),
                bad(VALID.replace(",\"sumOfSquares\":812", ""), Reason.SCHEMA, "/arms/control/metrics/orders/sumOfSquares: required field is missing"),
                bad(VALID.replace("sumOfSquares\":812", "sumOfSqaures\":812"), Reason.SCHEMA, "/arms/control/metrics/orders/sumOfSqaures: unknown field"),
                bad(VALID.replace("\"units\":10234", "\"units\":\"10234\""), Reason.SCHEMA, "/arms/control/units: must be a number, got string"),
                bad(VALID.replace("\"sequence\":42,", ""), Reason.SCHEMA, "/sequence: required field is missing"),
                bad(VALID.replace("\"observedAt\":\"2027-03-04T10:00:00Z\"", "\"observedAt\":1804154400"), Reason.SCHEMA, "/observedAt: must be a string, got number"),
                bad(VALID.replace("\"sum\":812,", "\"sum\":812,\"denominatorSum\":900,"), Reason.SCHEMA,
                        "a ratio metric needs all of denominatorSum, denominatorSumOfSquares and sumOfProducts, got 1 of them"),
                bad("{\"experiment\":\"checkout-redesign\",\"sequence\":1,\"observedAt\":\"2027-03-04T10:00:00Z\",\"arms\":{}}",
                        Reason.SCHEMA, "/arms: must hold at least one arm"),
                bad(VALID.replace("\"sum\":812", "\"sum\":\"NaN\""), Reason.SCHEMA, "/arms/control/metrics/orders/sum: must be a number, got string"),
                // key-mismatch is tested with a key below
                // invalid-value
                bad(VALID.replace("\"sum\":812", "\"sum\":NaN"), Reason.INVALID_VALUE, "/arms/control/metrics/orders/sum: must be in [0, 1e15], got NaN"),
                bad(VALID.replace("\"units\":10234", "\"units\":-10234"), Reason.INVALID_VALUE, "/arms/control/units: must be in [0, 1e15], got -10234"),
                bad(VALID.replace("\"units\":10234", "\"units\":10234.5"), Reason.INVALID_VALUE, "/arms/control/units: must be a whole number, got 10234.5"),
                bad(VALID.replace("\"units\":10234", "\"units\":2000000000000000"), Reason.INVALID_VALUE, "/arms/control/units: must be in [0, 1e15]"),
                bad(VALID.replace("\"sumOfSquares\":812", "\"sumOfSquares\":64"), Reason.INVALID_VALUE,
                        "/arms/control/metrics/orders/sumOfSquares: 64.0 is below sum^2/units = 64.42"),
                bad(VALID.replace("\"units\":10234", "\"units\":0"), Reason.INVALID_VALUE, "units is 0 but the sums are 812.0 and 812.0"),
                bad(VALID.replace("\"sequence\":42", "\"sequence\":-1"), Reason.INVALID_VALUE, "/sequence: must be in [0,"),
                bad(VALID.replace("\"sequence\":42", "\"sequence\":9223372036854775808"), Reason.INVALID_VALUE,
                        "/sequence: must be in [0, 9223372036854775807], got 9223372036854775808"), // Long.MAX_VALUE + 1
                bad(VALID.replace("2027-03-04T10:00:00Z", "2027-03-04 10:00"), Reason.INVALID_VALUE, "/observedAt: \"2027-03-04 10:00\" is not an ISO-8601"),
                bad(VALID.replace("\"experiment\":\"checkout-redesign\"", "\"experiment\":\"Checkout Redesign\""), Reason.INVALID_VALUE,
                        "/experiment: \"Checkout Redesign\" does not match"),
                bad(VALID.replace("\"control\":{", "\"con trol\":{"), Reason.INVALID_VALUE, "/arms: name \"con trol\" does not match"),
                bad(Records.withRatio(43, 20000, 1600).replace("\"sumOfProducts\":50400.0", "\"sumOfProducts\":504000.0"),
                        Reason.INVALID_VALUE, "/arms/control/metrics/basket_value/sumOfProducts: 504000.0 is above sqrt(sumOfSquares * denominatorSumOfSquares)"),
                // too-large
                bad(VALID.replace("\"orders\":{", "\"orders\":" + "[".repeat(20) + "]".repeat(20) + ",\"x\":{"), Reason.TOO_LARGE,
                        "nesting depth"),
                bad(VALID.replace("812", "8" + "1".repeat(80)), Reason.TOO_LARGE, "Number value length"));
    }

    private static Arguments bad(String record, Reason reason, String detailPart) {
        return Arguments.of(record, reason, detailPart);
    }

    @ParameterizedTest(name = "{1}: {2}")
    @MethodSource("badRecords")
    void badRecord_isRejected_withItsReasonAndAPreciseDetail(String record, Reason reason, String detailPart) {
        Rejection r = assertInstanceOf(Rejection.class, parser.parse(bytes(record), null), record);
        assertEquals(reason, r.reason(), r::toString);
        assertTrue(r.detail().contains(detailPart), () -> "detail was: " + r.detail());
    }

    @Test
    void recordUnderAnotherExperimentsKey_isKeyMismatch() {
        Rejection r = assertInstanceOf(Rejection.class, parser.parse(bytes(VALID), "gift-wrap-upsell"));
        assertEquals(Reason.KEY_MISMATCH, r.reason());
        assertEquals("record key \"gift-wrap-upsell\" differs from /experiment \"checkout-redesign\"", r.detail());
    }

    @Test
    void tombstone_isMalformedJson_notAnException() {
        assertEquals(Reason.MALFORMED_JSON, ((Rejection) parser.parse(null, "checkout-redesign")).reason());
    }

    @Test
    void payloadOverTheLimit_isTooLarge_beforeParsing() {
        Rejection r = assertInstanceOf(Rejection.class, parser.withMaxBytes(100).parse(bytes(VALID)));
        assertEquals(Reason.TOO_LARGE, r.reason());
        assertEquals("payload of " + VALID.length() + " bytes is over the limit of 100", r.detail());
        assertEquals(1 << 20, SnapshotParser.withDefaults().maxBytes()); // 1 MiB default of the brief
    }

    @Test
    void roundingInSumOfSquares_withinSlack_isAccepted() {
        // revenue rounded to cents: all 4 units spent 2.50, sum 10.00, sum of squares 25.00 == 10^2/4 exactly,
        // written by a producer as 24.9999999 (relative error 4e-9 < 1e-6 slack)
        String r = VALID.replace("\"units\":10234,\"metrics\":{\"orders\":{\"sum\":812,\"sumOfSquares\":812}}",
                "\"units\":4,\"metrics\":{\"orders\":{\"sum\":10.00,\"sumOfSquares\":24.9999999}}");
        assertInstanceOf(Snapshot.class, parser.parse(bytes(r)));
    }

    @Test
    void bigValidRecord_parses(TestReporter report) {
        String big = bigRecord(10, 1000);
        assertTrue(big.length() > 500_000 && big.length() < SnapshotParser.DEFAULT_MAX_BYTES, "size " + big.length());
        Snapshot s = assertInstanceOf(Snapshot.class, parser.parse(bytes(big)));
        assertEquals(10, s.arms().size());
        assertEquals(1000, s.arms().get("arm-7").metrics().size());
        assertEquals(7_000_000 + 999, (long) s.arms().get("arm-7").metrics().get("metric_999").sum());
        report.publishEntry("bigRecordBytes", Integer.toString(big.length()));
    }

    /** Parse throughput, reported and not asserted (the machine is shared). */
    @Test
    void parseSpeed_isMeasured(TestReporter report) {
        byte[] small = bytes(VALID);
        byte[] ratio = bytes(Records.withRatio(43, 20000, 1600));
        byte[] big = bytes(bigRecord(10, 1000));
        report.publishEntry("referenceRecord", perRecord(small, 50_000));
        report.publishEntry("ratioRecord", perRecord(ratio, 20_000));
        report.publishEntry("bigRecord", perRecord(big, 8));
    }

    private String perRecord(byte[] record, int n) {
        for (int i = 0; i < n / 4; i++) {
            assertTrue(parser.parse(record).accepted());
        }
        long start = System.nanoTime();
        int accepted = 0;
        for (int i = 0; i < n; i++) {
            accepted += parser.parse(record).accepted() ? 1 : 0;
        }
        double micros = (System.nanoTime() - start) / 1e3 / n;
        assertEquals(n, accepted);
        return String.format(Locale.ROOT, "%d bytes: %.2f us/record, %.1f MB/s", record.length, micros,
                record.length / micros);
    }

    static String bigRecord(int arms, int metrics) {
        StringBuilder b = new StringBuilder("{\"experiment\":\"recommendations-v2\",\"sequence\":7,"
                + "\"observedAt\":\"2027-03-04T10:00:00Z\",\"arms\":{");
        for (int a = 0; a < arms; a++) {
            b.append(a == 0 ? "" : ",").append("\"arm-").append(a).append("\":{\"units\":123456789,\"metrics\":{");
            for (int m = 0; m < metrics; m++) {
                long sum = a * 1_000_000L + m;
                b.append(m == 0 ? "" : ",").append("\"metric_").append(m).append("\":{\"sum\":").append(sum)
                        .append(",\"sumOfSquares\":").append(sum * 1000.5).append('}');
            }
            b.append("}}");
        }
        return b.append("}}").toString();
    }
}
