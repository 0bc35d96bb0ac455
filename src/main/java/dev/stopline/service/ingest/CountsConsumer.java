package dev.stopline.service.ingest;

import io.smallrye.reactive.messaging.annotations.Blocking;
import jakarta.enterprise.context.ApplicationScoped;
import jakarta.inject.Inject;
import java.util.ArrayList;
import java.util.List;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.consumer.ConsumerRecords;
import org.eclipse.microprofile.reactive.messaging.Incoming;

/**
 * The Kafka edge: one method that hands the records of each poll of the counts topic to
 * {@link CountsIngest}. Topic, deserializers, group, batch mode and commit strategy are in
 * {@code application.properties}. Batches are processed in order on a worker thread (the database
 * write blocks); their offsets are committed only after {@link CountsIngest#acceptAll} returned, i.e.
 * after every effect is durable.
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
    public void consume(ConsumerRecords<String, byte[]> records) {
        List<ConsumerRecord<String, byte[]>> all = new ArrayList<>(records.count());
        records.forEach(all::add);
        ingest.acceptAll(all);
    }
}
