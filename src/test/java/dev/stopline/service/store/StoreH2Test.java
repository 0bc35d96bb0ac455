package dev.stopline.service.store;

import java.util.Optional;

/** {@link StoreContractTest} on the embedded default, H2 (in memory, a database of its own). */
class StoreH2Test extends StoreContractTest {
    @Override
    String jdbcUrl() {
        return "jdbc:h2:mem:store-contract-" + System.nanoTime() + ";DB_CLOSE_DELAY=-1";
    }

    @Override
    Optional<String> user() {
        return Optional.empty();
    }
}
