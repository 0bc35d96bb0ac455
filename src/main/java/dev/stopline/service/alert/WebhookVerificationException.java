package dev.stopline.service.alert;

/** A received webhook failed verification; the message names the rule that was broken. */
public final class WebhookVerificationException extends RuntimeException {
    private static final long serialVersionUID = 1L;

    /** A printf-style message. */
    public WebhookVerificationException(String format, Object... args) {
        super(String.format(format, args));
    }
}
