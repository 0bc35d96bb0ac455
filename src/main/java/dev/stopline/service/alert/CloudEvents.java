package dev.stopline.service.alert;

import dev.stopline.monitor.AlertKind;
import java.io.UncheckedIOException;
import java.net.URI;
import java.net.URISyntaxException;
import java.nio.charset.StandardCharsets;
import java.time.format.DateTimeFormatter;
import java.util.regex.Pattern;

import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.common.header.internals.RecordHeaders;

import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ObjectNode;

/**
 * Renders an {@link AlertEnvelope} as a CloudEvents 1.0 event in structured content mode (the whole event
 * is one JSON object; over HTTP its media type is {@value #STRUCTURED_CONTENT_TYPE}).
 *
 * <p>Attributes (CloudEvents 1.0 core specification, "Context Attributes"; JSON event format):
 * <ul>
 *   <li>{@code specversion} = {@code "1.0"} (required)</li>
 *   <li>{@code id} = {@link AlertEnvelope#id()}, stable per alert (required; source + id identify an event,
 *   so a consumer drops a second copy)</li>
 *   <li>{@code source} = {@code urn:stopline:daemon:<instance>}, a URI-reference (required)</li>
 *   <li>{@code type} = {@code dev.stopline.alert.<kind>}, e.g. {@code dev.stopline.alert.sample-ratio}
 *   (required; reverse-DNS prefix as the specification recommends)</li>
 *   <li>{@code subject} = the experiment id; {@code time} = RFC 3339 in UTC;
 *   {@code datacontenttype} = {@code application/json}; {@code data} = the payload as JSON</li>
 * </ul>
 */
public final class CloudEvents {
    /** Media type of a structured-mode CloudEvent in JSON (CloudEvents JSON event format 1.0). */
    public static final String STRUCTURED_CONTENT_TYPE = "application/cloudevents+json";
    /** Prefix of every Stopline event type. */
    public static final String TYPE_PREFIX = "dev.stopline.alert.";

    /** Characters allowed in an instance name: they need no escaping in a URN's namespace-specific part. */
    private static final Pattern INSTANCE = Pattern.compile("[A-Za-z0-9][A-Za-z0-9._-]{0,62}");

    private final String source;
    private final ObjectMapper mapper;

    private CloudEvents(String source, ObjectMapper mapper) {
        this.source = source;
        this.mapper = mapper;
    }

    /**
     * Events whose {@code source} is {@code urn:stopline:daemon:<instance>}.
     *
     * @param instance 1 to 63 characters of {@code [A-Za-z0-9._-]}, starting with a letter or digit
     */
    public static CloudEvents forInstance(String instance) {
        if (instance == null || !INSTANCE.matcher(instance).matches()) {
            throw new IllegalArgumentException("instance '" + instance + "' must be 1-63 characters of"
                    + " [A-Za-z0-9._-] starting with a letter or digit");
        }
        String source = "urn:stopline:daemon:" + instance;
        try {
            new URI(source); // guard: the spec requires a URI-reference
        } catch (URISyntaxException e) {
            throw new IllegalArgumentException("source " + source + " is not a URI", e);
        }
        return new CloudEvents(source, new ObjectMapper());
    }

    /** The {@code source} attribute of every event from this instance. */
    public String source() {
        return source;
    }

    /** {@code dev.stopline.alert.<code>}, the code kept as is (so {@code sample-ratio} keeps its hyphen). */
    public static String type(AlertKind kind) {
        return TYPE_PREFIX + kind.wireName();
    }

    /** The event as a JSON tree (attribute order: required first, then optional, then data). */
    public ObjectNode toJson(AlertEnvelope alert) {
        ObjectNode e = mapper.createObjectNode();
        e.put("specversion", "1.0");
        e.put("id", alert.id());
        e.put("source", source);
        e.put("type", type(alert.kind()));
        e.put("subject", alert.experimentId());
        e.put("time", DateTimeFormatter.ISO_INSTANT.format(alert.time()));
        e.put("datacontenttype", "application/json");
        e.set("data", mapper.valueToTree(alert.payload()));
        return e;
    }

    /** The event as compact UTF-8 JSON bytes, ready for a Kafka value or an HTTP body. */
    public byte[] toBytes(AlertEnvelope alert) {
        try {
            return mapper.writeValueAsBytes(toJson(alert));
        } catch (JsonProcessingException e) {
            throw new UncheckedIOException("cannot render alert " + alert.id() + " as JSON", e);
        }
    }

    /**
     * The event as a Kafka record in structured mode (CloudEvents Kafka protocol binding 1.0): value = the
     * JSON event, header {@code content-type: application/cloudevents+json; charset=UTF-8}. The key is the
     * experiment id, so all alerts of one experiment land on one partition, in order.
     */
    public ProducerRecord<String, byte[]> toKafkaRecord(String topic, AlertEnvelope alert) {
        RecordHeaders h = new RecordHeaders();
        h.add("content-type", (STRUCTURED_CONTENT_TYPE + "; charset=UTF-8").getBytes(StandardCharsets.UTF_8));
        return new ProducerRecord<>(topic, null, null, alert.experimentId(), toBytes(alert), h);
    }
}
