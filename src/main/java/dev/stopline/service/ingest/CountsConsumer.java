package dev.stopline.service.ingest;

import io.smallrye.reactive.messaging.annotations.Blocking;
import jakarta.enterprise.context.ApplicationScoped;
import jakarta.inject.Inject;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.eclipse.microprofile.reactive.messaging.Incoming;

/**
 * The Kafka edge: one method that hands each record of the counts topic to {@link CountsIngest}.
 * Topic, deserializers, group and commit strategy are in {@code application.properties}. Records are
 * processed in order per partition on a worker thread (the database write blocks); the offset is
 * committed only after {@link CountsIngest#accept} returned, i.e. after the effect is durable.
 */
@ApplicationScoped
public class CountsConsumer {
    private final CountsIngest ingest;

    @Inject
    public CountsConsumer(CountsIngest ingest) {
        this.ingest = ingest;
    }

    @Incoming("counts")
    @Blocking(ordered = true)
    public void consume(ConsumerRecord<String, byte[]> record) {
        ingest.accept(record);
    }
}
