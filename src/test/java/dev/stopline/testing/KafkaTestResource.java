package dev.stopline.testing;

import io.quarkus.test.common.QuarkusTestResourceLifecycleManager;
import java.util.Map;

/**
 * Points a {@code @QuarkusTest} daemon at the real embedded broker shared by the test run
 * ({@link KafkaBrokerExtension#shared()}); the broker outlives the Quarkus application and is closed
 * with the JUnit run.
 */
public final class KafkaTestResource implements QuarkusTestResourceLifecycleManager {
    @Override
    public Map<String, String> start() {
        return Map.of("kafka.bootstrap.servers", KafkaBrokerExtension.bootstrapServers());
    }

    @Override
    public void stop() {
        // the shared broker is closed once, after the last test class (KafkaBrokerExtension)
    }
}
