package dev.stopline.testing;

import java.nio.file.Path;
import java.util.Map;

import io.quarkus.test.common.QuarkusTestResourceLifecycleManager;

import dev.stopline.service.broker.EmbeddedKafka;

/**
 * A real embedded Kafka broker for {@code @QuarkusTest}s: {@code @QuarkusTestResource(KafkaBrokerResource.class)}
 * (or {@code @WithTestResource}). Starts its own broker on free ports in a temporary directory (the
 * application under test may run in another class loader than JUnit's, so it does not share the static
 * broker of {@link KafkaBrokerExtension}), points {@code kafka.bootstrap.servers} at it and turns Kafka dev
 * services off, so no container is wanted.
 */
public final class KafkaBrokerResource implements QuarkusTestResourceLifecycleManager {
    private EmbeddedKafka kafka;
    private Path dir;

    @Override
    public Map<String, String> start() {
        KafkaBrokerExtension.trapExit();
        KafkaBrokerExtension.quietKafkaLogging();
        int[] ports = FreePorts.pickTwo();
        dir = KafkaBrokerExtension.tempDir("stopline-kafka-quarkus-");
        kafka = EmbeddedKafka.builder().port(ports[0]).controllerPort(ports[1]).dataDir(dir).build().start();
        return Map.of("kafka.bootstrap.servers", kafka.bootstrapServers(),
                "quarkus.kafka.devservices.enabled", "false");
    }

    @Override
    public void stop() {
        if (kafka != null) {
            kafka.close();
            KafkaBrokerExtension.deleteTree(dir);
            kafka = null;
        }
    }
}
