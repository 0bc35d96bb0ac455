package dev.stopline.service.alert;

import java.nio.charset.StandardCharsets;
import java.security.InvalidKeyException;
import java.security.MessageDigest;
import java.security.NoSuchAlgorithmException;
import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import java.util.Base64;
import java.util.LinkedHashMap;
import java.util.Locale;
import java.util.Map;

import javax.crypto.Mac;
import javax.crypto.spec.SecretKeySpec;

/**
 * Signs and verifies webhook requests the Standard Webhooks way.
 *
 * <p>Headers: {@code webhook-id} (the message id, the same on every retry), {@code webhook-timestamp} (Unix
 * seconds of this attempt) and {@code webhook-signature: v1,<base64(HMAC-SHA256(key, id + "." + timestamp +
 * "." + body))>}. The header may list several space-separated signatures (key rotation); one match
 * suffices. The secret is either {@code whsec_<base64 key>} (the key is the decoded bytes) or any other
 * string, whose UTF-8 bytes are the key.
 *
 * <p>Verification rejects a timestamp more than {@code tolerance} from the receiver's clock, in either
 * direction (default 5 minutes), which bounds replays; signatures are compared in constant time.
 */
public final class WebhookSigner {
    public static final String ID = "webhook-id";
    public static final String TIMESTAMP = "webhook-timestamp";
    public static final String SIGNATURE = "webhook-signature";
    /** Replay window of {@link #verify(Map, byte[], String, Clock)} (Standard Webhooks' suggestion). */
    public static final Duration DEFAULT_TOLERANCE = Duration.ofMinutes(5);

    private static final String PREFIX = "whsec_";
    private final byte[] key;

    private WebhookSigner(byte[] key) {
        this.key = key;
    }

    /** A signer for {@code secret} ({@code whsec_<base64>} or raw text); the key must not be empty. */
    public static WebhookSigner of(String secret) {
        return new WebhookSigner(key(secret));
    }

    /** The three headers for one attempt of message {@code id} sent at {@code at}. */
    public Map<String, String> headers(String id, Instant at, byte[] body) {
        if (id == null || id.isBlank()) {
            throw new IllegalArgumentException("webhook id must not be blank");
        }
        long ts = at.getEpochSecond();
        Map<String, String> h = new LinkedHashMap<>();
        h.put(ID, id);
        h.put(TIMESTAMP, Long.toString(ts));
        h.put(SIGNATURE, signature(id, ts, body));
        return h;
    }

    /** {@code v1,<base64 HMAC-SHA256 of "id.timestamp.body">}. */
    public String signature(String id, long timestamp, byte[] body) {
        return "v1," + Base64.getEncoder().encodeToString(hmac(key, id, timestamp, body));
    }

    /** {@link #verify(Map, byte[], String, Duration, Clock)} with the 5-minute tolerance. */
    public static void verify(Map<String, String> headers, byte[] body, String secret, Clock clock) {
        verify(headers, body, secret, DEFAULT_TOLERANCE, clock);
    }

    /**
     * Checks a received request. Header names are matched case-insensitively.
     *
     * @throws WebhookVerificationException naming the first rule broken: a header missing, a timestamp that
     *     is not an integer or is outside {@code now +/- tolerance}, or no {@code v1} signature matching
     */
    public static void verify(Map<String, String> headers, byte[] body, String secret, Duration tolerance,
            Clock clock) {
        Map<String, String> h = new LinkedHashMap<>();
        headers.forEach((k, v) -> h.put(k.toLowerCase(Locale.ROOT), v));
        String id = require(h, ID);
        String tsText = require(h, TIMESTAMP);
        String sigs = require(h, SIGNATURE);
        long ts;
        try {
            ts = Long.parseLong(tsText.trim());
        } catch (NumberFormatException e) {
            throw new WebhookVerificationException("webhook-timestamp '%s' is not Unix seconds", tsText);
        }
        long now = clock.instant().getEpochSecond();
        long tol = tolerance.getSeconds();
        if (ts < now - tol || ts > now + tol) {
            throw new WebhookVerificationException("webhook-timestamp %d is %d s from now %d, beyond the %d s"
                    + " tolerance", ts, ts - now, now, tol);
        }
        byte[] expected = hmac(key(secret), id, ts, body);
        for (String candidate : sigs.trim().split(" +")) {
            int comma = candidate.indexOf(',');
            if (comma < 0 || !candidate.substring(0, comma).equals("v1")) {
                continue;
            }
            byte[] given;
            try {
                given = Base64.getDecoder().decode(candidate.substring(comma + 1));
            } catch (IllegalArgumentException e) {
                continue;
            }
            if (MessageDigest.isEqual(expected, given)) {
                return;
            }
        }
        throw new WebhookVerificationException("no v1 signature in webhook-signature matches message %s", id);
    }

    private static String require(Map<String, String> h, String name) {
        String v = h.get(name);
        if (v == null || v.isBlank()) {
            throw new WebhookVerificationException("header %s is missing", name);
        }
        return v;
    }

    private static byte[] key(String secret) {
        if (secret == null || secret.isEmpty()) {
            throw new IllegalArgumentException("webhook secret must not be empty");
        }
        byte[] k;
        if (secret.startsWith(PREFIX)) {
            try {
                k = Base64.getDecoder().decode(secret.substring(PREFIX.length()));
            } catch (IllegalArgumentException e) {
                throw new IllegalArgumentException("webhook secret after whsec_ is not base64", e);
            }
        } else {
            k = secret.getBytes(StandardCharsets.UTF_8);
        }
        if (k.length == 0) {
            throw new IllegalArgumentException("webhook secret decodes to an empty key");
        }
        return k;
    }

    private static byte[] hmac(byte[] key, String id, long timestamp, byte[] body) {
        try {
            Mac mac = Mac.getInstance("HmacSHA256");
            mac.init(new SecretKeySpec(key, "HmacSHA256"));
            mac.update((id + "." + timestamp + ".").getBytes(StandardCharsets.UTF_8));
            return mac.doFinal(body);
        } catch (NoSuchAlgorithmException | InvalidKeyException e) {
            throw new IllegalStateException("HmacSHA256 unavailable", e); // every Java SE has it
        }
    }
}
