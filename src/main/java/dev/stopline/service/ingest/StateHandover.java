package dev.stopline.service.ingest;

import io.smallrye.common.annotation.Identifier;
import io.smallrye.reactive.messaging.kafka.KafkaConsumerRebalanceListener;
import jakarta.enterprise.context.ApplicationScoped;
import jakarta.inject.Inject;
import java.util.Collection;
import org.apache.kafka.clients.consumer.Consumer;
import org.apache.kafka.common.TopicPartition;
import org.jboss.logging.Logger;

/**
 * When several daemons share the consumer group, a partition (and so its experiments) can move to
 * another instance and back. Cached states would then be stale: on every assignment change the cache
 * is dropped, and each experiment's state is read again from the database, where the instance that
 * held the partition last left it.
 */
@ApplicationScoped
@Identifier("stopline-state-handover")
public class StateHandover implements KafkaConsumerRebalanceListener {
    private static final Logger LOG = Logger.getLogger(StateHandover.class);

    private final CountsIngest ingest;

    @Inject
    public StateHandover(CountsIngest ingest) {
        this.ingest = ingest;
    }

    @Override
    public void onPartitionsAssigned(Consumer<?, ?> consumer, Collection<TopicPartition> partitions) {
        ingest.forget();
        LOG.debugf("partitions assigned: %s", partitions);
    }

    @Override
    public void onPartitionsRevoked(Consumer<?, ?> consumer, Collection<TopicPartition> partitions) {
        ingest.forget();
        LOG.debugf("partitions revoked: %s", partitions);
    }

    @Override
    public void onPartitionsLost(Consumer<?, ?> consumer, Collection<TopicPartition> partitions) {
        ingest.forget();
    }
}
