package dev.stopline.testing;

import io.quarkus.test.common.QuarkusTestResourceLifecycleManager;
import java.util.Map;

/**
 * Points a {@code @QuarkusTest} daemon at the real embedded broker shared by the test run
 * ({@link KafkaBrokerExtension#shared()}) and sends its webhooks to the shared {@link WebhookReceiver};
 * the API token is {@link #API_TOKEN}; the broker outlives the Quarkus application and is closed with the JUnit run.
 */
public final class KafkaTestResource implements QuarkusTestResourceLifecycleManager {
    /** The API's bearer token in tests: send it as {@code Authorization: Bearer} on every POST. */
    public static final String API_TOKEN = "test-token-3f9c2a71d05e4b8c";

    @Override
    public Map<String, String> start() {
        return Map.of("kafka.bootstrap.servers", KafkaBrokerExtension.bootstrapServers(),
                "stopline.webhooks.urls", WebhookReceiver.shared().url(),
                "stopline.webhooks.secret", WebhookReceiver.SECRET,
                "stopline.webhooks.retry-later", "PT1S",
                "stopline.api.token", API_TOKEN);
    }

    @Override
    public void stop() {
        // the shared broker is closed once, after the last test class (KafkaBrokerExtension)
    }
}
