package dev.stopline.wire;

import static dev.stopline.wire.Records.bytes;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.util.EnumMap;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.TestReporter;

/**
 * Property: whatever the bytes, the parser and the sequencer return a Snapshot or a Rejection and
 * never throw. Seeded random mutations of valid records, at byte level (flips, cuts, inserts,
 * repeats) and at token level (a number or string replaced by a hostile value).
 */
class SnapshotFuzzTest {
    private static final long SEED = 20270304L;
    private static final int CASES = 10_000;
    private static final String[] HOSTILE = {"-1", "NaN", "Infinity", "-Infinity", "1e400", "1e15", "1e16", "0",
            "0.5", "-0.0", "null", "true", "\"\"", "\"x\"", "[]", "{}", "[[[[[[[[[[[[[[[[[[[[]]]]]]]]]]]]]]]]]]]",
            "123456789012345678901234567890", "9223372036854775808", "\"2027-02-30T10:00:00Z\"", "\"\\u0000\"",
            "\"\\ud800\"", "1E-400", "\"checkout-redesign\""};

    @Test
    void mutatedRecords_neverThrow_andCoverManyReasons(TestReporter report) {
        SplittableRandom rnd = new SplittableRandom(SEED);
        SnapshotParser parser = SnapshotParser.withDefaults().withMaxBytes(4096);
        PlanShape plan = SnapshotSequencerTest.CHECKOUT;
        Snapshot previous = (Snapshot) parser.parse(bytes(Records.withRatio(5, 9000, 700)));
        Map<Reason, Integer> reasons = new EnumMap<>(Reason.class);
        int accepted = 0;
        for (int i = 0; i < CASES; i++) {
            String base = rnd.nextBoolean() ? Records.VALID : Records.withRatio(6, 10000, 800);
            byte[] mutated = rnd.nextInt(3) == 0 ? tokenMutation(base, rnd) : byteMutation(bytes(base), rnd);
            Outcome parsed = parser.parse(mutated, rnd.nextInt(10) == 0 ? "gift-wrap-upsell" : "checkout-redesign");
            assertNotNull(parsed);
            Outcome checked = parsed instanceof Snapshot s ? SnapshotSequencer.check(s, previous, plan) : parsed;
            if (checked instanceof Rejection r) {
                assertFalse(r.detail().isBlank());
                reasons.merge(r.reason(), 1, Integer::sum);
            } else {
                accepted++;
            }
        }
        report.publishEntry("fuzz", "seed " + SEED + ", " + CASES + " cases: accepted " + accepted + ", " + reasons);
        // a fuzz that only ever hits one branch tests nothing: require the main reasons to occur
        for (Reason r : new Reason[] {Reason.MALFORMED_JSON, Reason.SCHEMA, Reason.INVALID_VALUE, Reason.KEY_MISMATCH,
                Reason.TOO_LARGE, Reason.UNKNOWN_ARM, Reason.UNKNOWN_METRIC, Reason.MISSING_METRIC, Reason.DECREASING_COUNT}) {
            assertTrue(reasons.getOrDefault(r, 0) > 0, "never produced " + r + ": " + reasons);
        }
        assertTrue(accepted > 0, "no mutation kept a valid record");
    }

    /**
     * The one-pass reader of the common case may only ever say "here is the snapshot" when the full
     * tree path says the same snapshot: on every mutation (valid or not) the parser's answer equals the
     * full path's, and on the unmutated records the fast path is the one answering.
     */
    @Test
    void fastPath_givesTheFullPathsAnswer_onEveryMutation(TestReporter report) {
        SplittableRandom rnd = new SplittableRandom(SEED + 1);
        SnapshotParser parser = SnapshotParser.withDefaults().withMaxBytes(4096);
        int fastAccepted = 0;
        int fullAccepted = 0;
        for (int i = 0; i < CASES; i++) {
            String base = rnd.nextBoolean() ? Records.VALID : Records.withRatio(6, 10000, 800 + rnd.nextInt(100) / 7.0);
            byte[] mutated = rnd.nextInt(3) == 0 ? tokenMutation(base, rnd) : byteMutation(bytes(base), rnd);
            String key = rnd.nextInt(10) == 0 ? "gift-wrap-upsell" : "checkout-redesign";
            Outcome full = parser.parseFully(mutated, key);
            assertEquals(full, parser.parse(mutated, key), () -> "differs on " + new String(mutated,
                    java.nio.charset.StandardCharsets.UTF_8));
            Snapshot fast = SnapshotParser.fastPathOnly(mutated, key);
            if (fast != null) {
                assertEquals(full, fast);
                fastAccepted++;
            }
            fullAccepted += full instanceof Snapshot ? 1 : 0;
        }
        for (String valid : new String[] {Records.VALID, Records.withRatio(6, 10000, 800.25)}) {
            assertNotNull(SnapshotParser.fastPathOnly(bytes(valid), "checkout-redesign"), valid);
        }
        report.publishEntry("fast path", fastAccepted + " of " + fullAccepted + " valid mutations read in one pass");
        assertTrue(fastAccepted > 0, "the fast path never answered");
    }

    private static byte[] byteMutation(byte[] in, SplittableRandom rnd) {
        ByteArrayOutputStream out = new ByteArrayOutputStream();
        int at = rnd.nextInt(in.length);
        int len = 1 + rnd.nextInt(Math.min(16, in.length - at));
        switch (rnd.nextInt(5)) {
            case 0 -> { // flip one byte to anything
                byte[] c = in.clone();
                c[at] = (byte) rnd.nextInt(256);
                return c;
            }
            case 1 -> { // cut a range
                out.write(in, 0, at);
                out.write(in, at + len, in.length - at - len);
            }
            case 2 -> { // insert random bytes
                out.write(in, 0, at);
                for (int k = 0; k < len; k++) {
                    out.write(rnd.nextInt(256));
                }
                out.write(in, at, in.length - at);
            }
            case 3 -> { // repeat a range many times (may exceed the 4 KiB limit)
                out.write(in, 0, at);
                int times = rnd.nextInt(400);
                for (int k = 0; k < times; k++) {
                    out.write(in, at, len);
                }
                out.write(in, at, in.length - at);
            }
            default -> out.write(in, 0, at); // truncate
        }
        return out.toByteArray();
    }

    /** Replaces one JSON scalar (a number or a string) with a hostile value. */
    private static byte[] tokenMutation(String in, SplittableRandom rnd) {
        java.util.regex.Matcher m = java.util.regex.Pattern.compile("-?\\d[\\d.eE+-]*|\"[^\"]*\"").matcher(in);
        java.util.List<int[]> spans = new java.util.ArrayList<>();
        while (m.find()) {
            spans.add(new int[] {m.start(), m.end()});
        }
        int[] s = spans.get(rnd.nextInt(spans.size()));
        String replacement = HOSTILE[rnd.nextInt(HOSTILE.length)];
        return bytes(in.substring(0, s[0]) + replacement + in.substring(s[1]));
    }
}
