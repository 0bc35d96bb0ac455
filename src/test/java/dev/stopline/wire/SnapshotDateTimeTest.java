package dev.stopline.wire;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;

import java.time.Instant;
import java.time.OffsetDateTime;
import java.time.format.DateTimeParseException;
import java.util.SplittableRandom;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;
import org.junit.jupiter.api.Test;

/**
 * The fast path of {@link SnapshotParser#dateTime} against the reference it replaces,
 * {@code OffsetDateTime.parse(s).toInstant()} (JDK): same value for every accepted string, the same
 * refusal for every other.
 */
class SnapshotDateTimeTest {

    @Test
    void dateTime_seededRandomUtcTimes_equalOffsetDateTimeParse() {
        SplittableRandom random = new SplittableRandom(20270304L);
        for (int i = 0; i < 20_000; i++) {
            // every second from year 0000 to 9999, as the 20-character UTC form
            long epochSecond = random.nextLong(-62_167_219_200L, 253_402_300_800L);
            String s = Instant.ofEpochSecond(epochSecond).toString();
            if (s.length() == 20) {
                assertEquals(OffsetDateTime.parse(s).toInstant(), SnapshotParser.dateTime(s), s);
            }
        }
    }

    @ParameterizedTest
    @ValueSource(strings = {"2027-03-04T10:00:00Z", "2028-02-29T23:59:59Z", "0000-01-01T00:00:00Z",
            "2027-03-04T10:00:00.5Z", "2027-03-04T10:00:00+02:00", "2027-03-04T10:00Z", "+12027-03-04T10:00:00Z",
            "2027-03-04t10:00:00z"}) // the reference parses case-insensitively
    void dateTime_acceptedForms_equalOffsetDateTimeParse(String s) {
        assertEquals(OffsetDateTime.parse(s).toInstant(), SnapshotParser.dateTime(s), s);
    }

    @ParameterizedTest
    @ValueSource(strings = {"2027-02-29T10:00:00Z", "2027-13-04T10:00:00Z", "2027-03-32T10:00:00Z",
            "2027-03-04T24:00:00Z", "2027-03-04T10:60:00Z", "2027-03-04T10:00:60Z", "2027-03-04 10:00:00Z", "2027-03-0x T10:00:0Z", "2027-03-04T10:00:00", "2027-0\u0663-04T10:00:00Z",
            "-027-03-04T10:00:00Z"})
    void dateTime_refusedForms_areRefusedAsByOffsetDateTimeParse(String s) {
        assertThrows(DateTimeParseException.class, () -> OffsetDateTime.parse(s), "reference refuses " + s);
        assertThrows(DateTimeParseException.class, () -> SnapshotParser.dateTime(s), s);
    }
}
