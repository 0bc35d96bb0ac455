package dev.stopline.service.broker;

import java.nio.charset.StandardCharsets;
import java.util.Optional;
import java.util.regex.Pattern;

import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.common.header.Header;
import org.apache.kafka.common.header.Headers;
import org.apache.kafka.common.header.internals.RecordHeaders;

/**
 * How a count record that cannot be used is set aside: a record on {@value #TOPIC} with the original key
 * and value bytes unchanged, the original headers, and five headers that say why and where it came from:
 * <ul>
 *   <li>{@value #REASON}: a reason code, lower-case words joined by {@code -} (e.g. {@value #OUT_OF_ORDER}),
 *   stable enough to count and alert on</li>
 *   <li>{@value #DETAIL}: a human explanation, at most {@value #MAX_DETAIL} characters</li>
 *   <li>{@value #SOURCE_TOPIC}, {@value #SOURCE_PARTITION}, {@value #SOURCE_OFFSET}: where the original
 *   is (partition and offset as decimal text)</li>
 * </ul>
 * All values are UTF-8 text so that any console consumer shows them. A record that is dead-lettered again
 * (after being re-driven) gets fresh {@code stopline-*} headers; the previous ones are dropped.
 * The key is kept so that the dead letters of one experiment stay in order on one partition.
 */
public final class DeadLetters {
    public static final String TOPIC = "stopline.counts.dlq";
    public static final String REASON = "stopline-reason";
    public static final String DETAIL = "stopline-detail";
    public static final String SOURCE_TOPIC = "stopline-source-topic";
    public static final String SOURCE_PARTITION = "stopline-source-partition";
    public static final String SOURCE_OFFSET = "stopline-source-offset";

    // Reason codes are dev.stopline.wire.Reason#code() (plus "evaluation-error"); one list, kept there.

    /** Longest detail kept; longer text is cut and ends with an ellipsis. */
    public static final int MAX_DETAIL = 1_000;
    private static final Pattern CODE = Pattern.compile("[a-z0-9]+(-[a-z0-9]+)*");
    private static final String OWN_PREFIX = "stopline-";

    private DeadLetters() {
    }

    /** What the {@code stopline-*} headers of a dead letter say. */
    public record Letter(String reason, String detail, String sourceTopic, int sourcePartition, long sourceOffset) {
    }

    /** The dead letter of a consumed record, to {@value #TOPIC}. */
    public static ProducerRecord<byte[], byte[]> of(ConsumerRecord<byte[], byte[]> original, String reason,
            String detail) {
        return of(original.topic(), original.partition(), original.offset(), original.key(), original.value(),
                original.headers(), reason, detail);
    }

    /**
     * The dead letter of a record known by its coordinates.
     *
     * @param reason a code matching {@code [a-z0-9]+(-[a-z0-9]+)*}
     * @param originalHeaders copied, except any {@code stopline-*} header; may be null
     */
    public static ProducerRecord<byte[], byte[]> of(String sourceTopic, int partition, long offset, byte[] key,
            byte[] value, Headers originalHeaders, String reason, String detail) {
        if (reason == null || !CODE.matcher(reason).matches()) {
            throw new IllegalArgumentException("dead-letter reason '" + reason
                    + "' must be lower-case words joined by '-'");
        }
        if (sourceTopic == null || sourceTopic.isEmpty() || partition < 0 || offset < 0) {
            throw new IllegalArgumentException("source " + sourceTopic + "-" + partition + "@" + offset
                    + " needs a topic and non-negative partition and offset");
        }
        RecordHeaders h = new RecordHeaders();
        if (originalHeaders != null) {
            for (Header x : originalHeaders) {
                if (!x.key().startsWith(OWN_PREFIX)) {
                    h.add(x.key(), x.value());
                }
            }
        }
        h.add(REASON, utf8(reason));
        h.add(DETAIL, utf8(cut(detail == null ? "" : detail)));
        h.add(SOURCE_TOPIC, utf8(sourceTopic));
        h.add(SOURCE_PARTITION, utf8(Integer.toString(partition)));
        h.add(SOURCE_OFFSET, utf8(Long.toString(offset)));
        return new ProducerRecord<>(TOPIC, null, null, key, value, h);
    }

    /** Reads the {@code stopline-*} headers back; empty if any of the five is missing or unreadable. */
    public static Optional<Letter> read(Headers headers) {
        String reason = text(headers, REASON);
        String detail = text(headers, DETAIL);
        String topic = text(headers, SOURCE_TOPIC);
        String partition = text(headers, SOURCE_PARTITION);
        String offset = text(headers, SOURCE_OFFSET);
        if (reason == null || detail == null || topic == null || partition == null || offset == null) {
            return Optional.empty();
        }
        try {
            return Optional.of(new Letter(reason, detail, topic, Integer.parseInt(partition),
                    Long.parseLong(offset)));
        } catch (NumberFormatException e) {
            return Optional.empty();
        }
    }

    private static String text(Headers headers, String key) {
        Header h = headers.lastHeader(key);
        return h == null || h.value() == null ? null : new String(h.value(), StandardCharsets.UTF_8);
    }

    private static String cut(String s) {
        if (s.length() <= MAX_DETAIL) {
            return s;
        }
        int end = MAX_DETAIL - 1;
        if (Character.isHighSurrogate(s.charAt(end - 1))) {
            end--; // do not split a surrogate pair
        }
        return s.substring(0, end) + "\u2026";
    }

    private static byte[] utf8(String s) {
        return s.getBytes(StandardCharsets.UTF_8);
    }
}
