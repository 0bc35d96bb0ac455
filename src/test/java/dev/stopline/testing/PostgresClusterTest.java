package dev.stopline.testing;

import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.nio.file.Path;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** The PostgreSQL test cluster fails loudly when it cannot run, instead of skipping the tests that need it. */
class PostgresClusterTest {
    @TempDir
    Path empty;

    @Test
    void missingBinaries_failTheTestWithAMessageNamingTheFileAndThePackage() {
        PostgresCluster pg = new PostgresCluster(empty.resolve("no-such-bin"));
        IllegalStateException e = assertThrows(IllegalStateException.class, pg::start);
        assertTrue(e.getMessage().contains("no-such-bin/initdb is missing"), e.getMessage());
        assertTrue(e.getMessage().contains("apt-get install postgresql-15"), e.getMessage());
        pg.stop(); // nothing was started: a no-op, and no exception
    }
}
