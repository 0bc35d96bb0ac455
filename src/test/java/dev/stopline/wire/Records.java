package dev.stopline.wire;

import java.nio.charset.StandardCharsets;

/** Realistic records of the bookshop's checkout-redesign experiment, for the wire tests. */
final class Records {
    private Records() {
    }

    /** The record of the wire-format reference (orders is a 0/1 metric, so sumOfSquares == sum). */
    static final String VALID = "{\"experiment\":\"checkout-redesign\",\"sequence\":42,\"observedAt\":\"2027-03-04T10:00:00Z\","
            + "\"arms\":{\"control\":{\"units\":10234,\"metrics\":{\"orders\":{\"sum\":812,\"sumOfSquares\":812}}},"
            + "\"treatment\":{\"units\":10187,\"metrics\":{\"orders\":{\"sum\":861,\"sumOfSquares\":861}}}}}";

    /** The same experiment an hour later, with a ratio metric (basket value per order) and a mean metric. */
    static String withRatio(long sequence, long units, double orders) {
        return String.format(java.util.Locale.ROOT,
                "{\"experiment\":\"checkout-redesign\",\"sequence\":%d,\"observedAt\":\"2027-03-04T11:00:00Z\",\"arms\":{"
                        + "\"control\":{\"units\":%d,\"metrics\":{\"orders\":{\"sum\":%s,\"sumOfSquares\":%s},"
                        + "\"page_load_ms\":{\"sum\":%d,\"sumOfSquares\":%d},"
                        + "\"basket_value\":{\"sum\":%s,\"sumOfSquares\":%s,\"denominatorSum\":%s,"
                        + "\"denominatorSumOfSquares\":%s,\"sumOfProducts\":%s}}},"
                        + "\"treatment\":{\"units\":%d,\"metrics\":{\"orders\":{\"sum\":%s,\"sumOfSquares\":%s},"
                        + "\"page_load_ms\":{\"sum\":%d,\"sumOfSquares\":%d},"
                        + "\"basket_value\":{\"sum\":%s,\"sumOfSquares\":%s,\"denominatorSum\":%s,"
                        + "\"denominatorSumOfSquares\":%s,\"sumOfProducts\":%s}}}}}",
                sequence, units, orders, orders, units * 900, units * 900 * 1000,
                orders * 31.5, orders * 1400.0, orders, orders, orders * 31.5,
                units, orders, orders, units * 880, units * 880 * 1000,
                orders * 32.0, orders * 1450.0, orders, orders, orders * 32.0);
    }

    static byte[] bytes(String s) {
        return s.getBytes(StandardCharsets.UTF_8);
    }
}
