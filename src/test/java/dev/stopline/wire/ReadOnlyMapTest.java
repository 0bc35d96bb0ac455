package dev.stopline.wire;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertThrows;

import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;

class ReadOnlyMapTest {
    @Test
    void copyOf_aForeignMap_isACopyInItsOrder_thatTheCallerCannotChange() {
        Map<String, Integer> source = new LinkedHashMap<>();
        source.put("treatment", 2);
        source.put("control", 1);
        Map<String, Integer> copy = ReadOnlyMap.copyOf(source);
        source.put("holdout", 3);
        assertEquals(List.of("treatment", "control"), List.copyOf(copy.keySet()));
        assertEquals(Map.of("treatment", 2, "control", 1), copy);
        assertThrows(UnsupportedOperationException.class, () -> copy.put("x", 0));
        assertThrows(UnsupportedOperationException.class, () -> copy.entrySet().iterator().next().setValue(9));
        assertThrows(UnsupportedOperationException.class, () -> copy.keySet().remove("control"));
    }

    @Test
    void copyOf_aReadOnlyMap_isTheSameMap() {
        Map<String, Integer> once = ReadOnlyMap.copyOf(Map.of("control", 1));
        assertSame(once, ReadOnlyMap.copyOf(once));
    }

    @Test
    void snapshotsFromBothParserPaths_areEqualAndUnmodifiable() {
        byte[] record = Records.VALID.getBytes(java.nio.charset.StandardCharsets.UTF_8);
        Snapshot fast = SnapshotParser.fastPathOnly(record, "checkout-redesign");
        Snapshot viaRecord = new Snapshot(fast.experiment(), fast.sequence(), fast.observedAt(),
                new LinkedHashMap<>(fast.arms()));
        assertEquals(viaRecord, fast);
        assertEquals(viaRecord.hashCode(), fast.hashCode());
        assertThrows(UnsupportedOperationException.class, () -> fast.arms().clear());
        assertThrows(UnsupportedOperationException.class,
                () -> fast.arms().get("control").metrics().remove("orders"));
    }
}
