package dev.stopline.testing;

import io.quarkus.test.common.QuarkusTestResourceLifecycleManager;
import java.util.Map;

/**
 * Points a {@code @QuarkusTest} daemon at the real embedded broker shared by the test run
 * ({@link KafkaBrokerExtension#shared()}) and sends its webhooks to the shared {@link WebhookReceiver};
 * the broker outlives the Quarkus application and is closed with the JUnit run.
 */
public final class KafkaTestResource implements QuarkusTestResourceLifecycleManager {
    /** The API token of the test daemon (mutating calls need it once access control is on). */
    public static final String API_TOKEN = "test-token-7f3a9c";

    @Override
    public Map<String, String> start() {
        return Map.of("kafka.bootstrap.servers", KafkaBrokerExtension.bootstrapServers(),
                "stopline.webhooks.urls", WebhookReceiver.shared().url(),
                "stopline.webhooks.secret", WebhookReceiver.SECRET,
                "stopline.webhooks.retry-later", "PT1S");
    }

    @Override
    public void stop() {
        // the shared broker is closed once, after the last test class (KafkaBrokerExtension)
    }
}
