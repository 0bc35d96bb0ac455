package dev.stopline.service.alert;

import java.net.URI;

/**
 * A receiver of webhooks and the secret its requests are signed with.
 *
 * @param url absolute {@code http} or {@code https} URL
 * @param secret {@code whsec_<base64>} or raw text (see {@link WebhookSigner}); never logged
 */
public record WebhookEndpoint(URI url, String secret) {

    /** Validates the URL's scheme and the secret (by building a signer). */
    public WebhookEndpoint {
        if (url == null || !url.isAbsolute()
                || !("http".equalsIgnoreCase(url.getScheme()) || "https".equalsIgnoreCase(url.getScheme()))) {
            throw new IllegalArgumentException("webhook URL " + url + " must be absolute http or https");
        }
        WebhookSigner.of(secret);
    }

    /** Shows the URL only, never the secret. */
    @Override
    public String toString() {
        return "WebhookEndpoint[" + url + "]";
    }
}
