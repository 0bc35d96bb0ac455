package dev.stopline.simulations;

import static org.junit.jupiter.api.Assertions.assertEquals;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Map;
import java.util.TreeSet;
import java.util.stream.Collectors;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** The committed streams are exactly what {@link RecordStreams} writes: they can always be regenerated. */
class RecordStreamsTest {
    static final Path DIR = Path.of("simulations/streams");

    @Test
    void regeneratedStreams_equalTheCommittedFiles_byteForByte() throws IOException {
        for (Map.Entry<String, String> e : RecordStreams.streams().entrySet()) {
            String committed = Files.readString(DIR.resolve(e.getKey()), StandardCharsets.UTF_8);
            assertEquals(committed, e.getValue(), e.getKey() + " differs from what RecordStreams writes; regenerate "
                    + "as simulations/streams/README.md says, or find what made the scenario change");
        }
    }

    @Test
    void everyCommittedStream_isWrittenByTheGenerator() throws IOException {
        try (Stream<Path> files = Files.list(DIR)) {
            TreeSet<String> jsonl = files.map(p -> p.getFileName().toString()).filter(n -> n.endsWith(".jsonl"))
                    .collect(Collectors.toCollection(TreeSet::new));
            assertEquals(new TreeSet<>(RecordStreams.streams().keySet()), jsonl);
        }
    }

    @Test
    void main_writesTheSameFilesAsStreams(@TempDir Path dir) throws IOException {
        RecordStreams.main(new String[] {dir.toString()});
        for (Map.Entry<String, String> e : RecordStreams.streams().entrySet()) {
            assertEquals(e.getValue(), Files.readString(dir.resolve(e.getKey()), StandardCharsets.UTF_8), e.getKey());
        }
    }
}
