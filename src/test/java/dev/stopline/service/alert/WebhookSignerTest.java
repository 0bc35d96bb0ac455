package dev.stopline.service.alert;

import static org.junit.jupiter.api.Assertions.assertDoesNotThrow;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.nio.charset.StandardCharsets;
import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import java.time.ZoneOffset;
import java.util.Base64;
import java.util.HashMap;
import java.util.Map;

import javax.crypto.Mac;
import javax.crypto.spec.SecretKeySpec;

import org.junit.jupiter.api.Test;

class WebhookSignerTest {
    private static final byte[] BODY = "{\"experiment\":\"gift-wrap-upsell\",\"kind\":\"futility\"}"
            .getBytes(StandardCharsets.UTF_8);
    private static final Instant AT = Instant.ofEpochSecond(1_796_000_000L);
    private static final Clock NOW = Clock.fixed(AT, ZoneOffset.UTC);

    @Test
    void signature_equalsHmacSha256ComputedIndependently_withJavaxCrypto() throws Exception {
        byte[] key = new byte[] {1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16};
        String secret = "whsec_" + Base64.getEncoder().encodeToString(key);
        // independent computation: HMAC-SHA256(key, "id.timestamp.body"), base64, "v1," prefix
        Mac mac = Mac.getInstance("HmacSHA256");
        mac.init(new SecretKeySpec(key, "HmacSHA256"));
        byte[] expected = mac.doFinal(("msg_42." + AT.getEpochSecond() + "." + new String(BODY,
                StandardCharsets.UTF_8)).getBytes(StandardCharsets.UTF_8));

        Map<String, String> h = WebhookSigner.of(secret).headers("msg_42", AT, BODY);

        assertEquals("msg_42", h.get("webhook-id"));
        assertEquals("1796000000", h.get("webhook-timestamp"));
        assertEquals("v1," + Base64.getEncoder().encodeToString(expected), h.get("webhook-signature"));
    }

    @Test
    void signature_matchesStandardWebhooksPublishedExample() {
        // Standard Webhooks reference test vector, from memory (it also agreed with an independent
        // javax.crypto computation when this test was written)
        String secret = "whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw";
        byte[] body = "{\"test\": 2432232314}".getBytes(StandardCharsets.UTF_8);
        assertEquals("v1,g0hM9SsE+OTPJTGt/tmIKtSyZlE3uFJELVlNIOLJ1OE=",
                WebhookSigner.of(secret).signature("msg_p5jXN8AQM9LWM0D4loKWxJek", 1614265330L, body));
    }

    @Test
    void rawSecret_usesItsUtf8BytesAsKey() throws Exception {
        Mac mac = Mac.getInstance("HmacSHA256");
        mac.init(new SecretKeySpec("bookshop-secret".getBytes(StandardCharsets.UTF_8), "HmacSHA256"));
        byte[] expected = mac.doFinal(("m.1." + new String(BODY, StandardCharsets.UTF_8))
                .getBytes(StandardCharsets.UTF_8));
        assertEquals("v1," + Base64.getEncoder().encodeToString(expected),
                WebhookSigner.of("bookshop-secret").signature("m", 1L, BODY));
    }

    @Test
    void verify_acceptsOwnSignature_withHeaderNamesInAnyCase() {
        Map<String, String> h = new HashMap<>();
        WebhookSigner.of("whsec_c2VjcmV0LWtleQ==").headers("msg_1", AT, BODY)
                .forEach((k, v) -> h.put(k.toUpperCase(), v));
        assertDoesNotThrow(() -> WebhookSigner.verify(h, BODY, "whsec_c2VjcmV0LWtleQ==", NOW));
    }

    @Test
    void verify_acceptsIfAnyOfSeveralSignaturesMatches() {
        Map<String, String> h = new HashMap<>(WebhookSigner.of("new-key").headers("msg_1", AT, BODY));
        String good = h.get("webhook-signature");
        h.put("webhook-signature", "v1,AAAA v2,zzz " + good); // rotation: old and new key side by side
        assertDoesNotThrow(() -> WebhookSigner.verify(h, BODY, "new-key", NOW));
    }

    @Test
    void verify_rejectsTamperedBody_wrongSecret_andWrongId() {
        Map<String, String> h = WebhookSigner.of("k1").headers("msg_1", AT, BODY);
        byte[] tampered = BODY.clone();
        tampered[5] ^= 1;
        assertRejected(h, tampered, "k1", "no v1 signature");
        assertRejected(h, BODY, "k2", "no v1 signature");
        Map<String, String> otherId = new HashMap<>(h);
        otherId.put("webhook-id", "msg_2");
        assertRejected(otherId, BODY, "k1", "no v1 signature");
    }

    @Test
    void verify_rejectsTimestampsOutsideFiveMinutes_inEitherDirection() {
        WebhookSigner s = WebhookSigner.of("k1");
        // 5 minutes is Standard Webhooks' suggested tolerance (common practice)
        assertDoesNotThrow(() -> WebhookSigner.verify(s.headers("m", AT.minusSeconds(300), BODY), BODY, "k1", NOW));
        assertDoesNotThrow(() -> WebhookSigner.verify(s.headers("m", AT.plusSeconds(300), BODY), BODY, "k1", NOW));
        assertRejected(s.headers("m", AT.minusSeconds(301), BODY), BODY, "k1", "tolerance");
        assertRejected(s.headers("m", AT.plusSeconds(301), BODY), BODY, "k1", "tolerance");
        assertDoesNotThrow(() -> WebhookSigner.verify(s.headers("m", AT.minusSeconds(3600), BODY), BODY, "k1",
                Duration.ofHours(2), NOW), "a wider tolerance is honoured");
    }

    @Test
    void verify_rejectsMissingHeaders_andNonNumericTimestamp() {
        Map<String, String> h = new HashMap<>(WebhookSigner.of("k1").headers("m", AT, BODY));
        h.remove("webhook-signature");
        assertRejected(h, BODY, "k1", "webhook-signature is missing");
        Map<String, String> t = new HashMap<>(WebhookSigner.of("k1").headers("m", AT, BODY));
        t.put("webhook-timestamp", "2026-11-30T00:00:00Z");
        assertRejected(t, BODY, "k1", "not Unix seconds");
    }

    @Test
    void secrets_thatGiveNoKey_areRejected() {
        assertThrows(IllegalArgumentException.class, () -> WebhookSigner.of(""));
        assertThrows(IllegalArgumentException.class, () -> WebhookSigner.of("whsec_"));
        assertThrows(IllegalArgumentException.class, () -> WebhookSigner.of("whsec_not base64!"));
    }

    private static void assertRejected(Map<String, String> h, byte[] body, String secret, String why) {
        WebhookVerificationException e = assertThrows(WebhookVerificationException.class,
                () -> WebhookSigner.verify(h, body, secret, NOW));
        assertTrue(e.getMessage().contains(why), "message '" + e.getMessage() + "' should say " + why);
    }
}
