package dev.stopline.service.store;

import dev.stopline.testing.PostgresCluster;
import java.util.Optional;
import org.junit.jupiter.api.extension.RegisterExtension;

/**
 * {@link StoreContractTest} on PostgreSQL 15, the production store: a private cluster started for this
 * class from Debian's binaries (fails, naming the package, if they are missing).
 */
class StorePostgresTest extends StoreContractTest {
    @RegisterExtension
    static final PostgresCluster PG = new PostgresCluster();

    @Override
    String jdbcUrl() {
        return PG.jdbcUrl();
    }

    @Override
    Optional<String> user() {
        return Optional.of(PG.user());
    }
}
