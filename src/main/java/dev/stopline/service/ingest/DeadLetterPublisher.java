package dev.stopline.service.ingest;

import io.smallrye.reactive.messaging.kafka.api.OutgoingKafkaRecordMetadata;
import jakarta.enterprise.context.ApplicationScoped;
import jakarta.inject.Inject;
import java.nio.charset.StandardCharsets;
import java.util.concurrent.CompletableFuture;
import java.util.concurrent.ExecutionException;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.TimeoutException;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import dev.stopline.service.broker.DeadLetters;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.eclipse.microprofile.reactive.messaging.Channel;
import org.eclipse.microprofile.reactive.messaging.Emitter;
import org.eclipse.microprofile.reactive.messaging.Message;
import org.eclipse.microprofile.reactive.messaging.Metadata;

/**
 * Writes rejected records to the dead-letter topic ({@code stopline.counts.dlq} by default) with the
 * original key and value and the headers of {@link DeadLetters}: {@code stopline-reason} (a stable code such
 * as {@code out-of-order}), {@code stopline-detail} (a sentence), and where the record came from.
 *
 * <p>The send is awaited before the original record is acknowledged, so a rejected record is never
 * lost between the two topics: if the dead-letter write fails, the consumer sees the failure and the
 * record is read again.
 */
@ApplicationScoped
public class DeadLetterPublisher {
    private final Emitter<byte[]> emitter;

    @Inject
    public DeadLetterPublisher(@Channel("dead-letters") Emitter<byte[]> emitter) {
        this.emitter = emitter;
    }

    public void publish(ConsumerRecord<String, byte[]> record, String reason, String detail) {
        byte[] key = record.key() == null ? null : record.key().getBytes(StandardCharsets.UTF_8);
        byte[] value = record.value() == null ? new byte[0] : record.value();
        ProducerRecord<byte[], byte[]> letter = DeadLetters.of(record.topic(), record.partition(), record.offset(),
                key, value, record.headers(), reason, detail);
        OutgoingKafkaRecordMetadata<byte[]> meta = OutgoingKafkaRecordMetadata.<byte[]>builder()
                .withKey(letter.key()).withHeaders(letter.headers()).build();
        CompletableFuture<Void> done = new CompletableFuture<>();
        emitter.send(Message.of(value, Metadata.of(meta))
                .withAck(() -> {
                    done.complete(null);
                    return CompletableFuture.completedFuture(null);
                })
                .withNack(e -> {
                    done.completeExceptionally(e);
                    return CompletableFuture.completedFuture(null);
                }));
        try {
            done.get(30, TimeUnit.SECONDS);
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            throw new IllegalStateException("interrupted while writing a dead letter", e);
        } catch (ExecutionException | TimeoutException e) {
            throw new IllegalStateException("dead-letter write failed: " + e.getMessage(), e);
        }
    }
}
