package dev.stopline.wire;

import static dev.stopline.wire.Records.bytes;
import static org.junit.jupiter.api.Assertions.assertEquals;

import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;

/** Parser and sequencer together, as an offline replay of a JSONL file uses them. */
class SnapshotGateTest {

    @Test
    void replayOfAJsonlStream_acceptsInOrder_andNamesEveryRejection() {
        String jsonl = String.join("\n",
                Records.withRatio(1, 10000, 800),
                Records.withRatio(2, 11000, 880),
                Records.withRatio(2, 11000, 880),             // redelivery
                Records.withRatio(1, 10000, 800),             // late copy of an old one
                "{\"experiment\":\"checkout-redesign\",",     // truncated line
                Records.withRatio(3, 10900, 900),             // units went down
                Records.withRatio(3, 12000, 960),
                Records.withRatio(4, 13000, 1040).replace("checkout-redesign", "gift-wrap-upsell"));
        SnapshotGate gate = new SnapshotGate(SnapshotParser.withDefaults(),
                Map.of("checkout-redesign", SnapshotSequencerTest.CHECKOUT)::get);
        List<String> outcomes = new ArrayList<>();
        for (String line : jsonl.split("\n")) {
            Outcome o = gate.offer(bytes(line), null);
            outcomes.add(o instanceof Snapshot s ? "look " + s.sequence() : ((Rejection) o).code());
        }
        assertEquals(List.of("look 1", "look 2", "duplicate", "out-of-order", "malformed-json", "decreasing-count",
                "look 3", "unknown-experiment"), outcomes);
        assertEquals(3, gate.lastAccepted("checkout-redesign").sequence());
    }
}
