package dev.stopline.testing;

import com.sun.net.httpserver.HttpServer;
import dev.stopline.service.alert.WebhookSigner;
import java.io.IOException;
import java.io.InputStream;
import java.io.UncheckedIOException;
import java.net.InetSocketAddress;
import java.time.Clock;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * A webhook endpoint for tests: a real HTTP server on 127.0.0.1 that verifies every request's Standard
 * Webhooks signature with the shared secret, answers 204 to good ones and 401 to bad ones, and keeps
 * what it received. One shared instance per test JVM, like the shared broker; tests of failing endpoints
 * start their own ({@link #start(int)}) and tell it to fail first ({@link #failFirst}).
 */
public final class WebhookReceiver implements AutoCloseable {
    public static final String SECRET = "whsec_" + java.util.Base64.getEncoder()
            .encodeToString("stopline-test-secret-0123456789ab".getBytes(java.nio.charset.StandardCharsets.UTF_8));

    /** One verified delivery. */
    public record Delivery(String id, String body) {
    }

    private static WebhookReceiver shared;

    private final HttpServer server;
    private final List<Delivery> verified = new ArrayList<>();
    private final List<String> refused = new ArrayList<>();
    private final List<String> failed = new ArrayList<>();
    private int failuresLeft;
    private int failStatus;
    private String failRetryAfter;

    private WebhookReceiver(int port) throws IOException {
        server = HttpServer.create(new InetSocketAddress("127.0.0.1", port), 0);
        server.createContext("/hooks/alerts", exchange -> {
            byte[] body;
            try (InputStream in = exchange.getRequestBody()) {
                body = in.readAllBytes();
            }
            synchronized (this) {
                if (failuresLeft > 0) {
                    failuresLeft--;
                    failed.add(exchange.getRequestHeaders().getFirst("webhook-id"));
                    if (failRetryAfter != null) {
                        exchange.getResponseHeaders().add("Retry-After", failRetryAfter);
                    }
                    exchange.sendResponseHeaders(failStatus, -1);
                    exchange.close();
                    return;
                }
            }
            Map<String, String> headers = new LinkedHashMap<>();
            exchange.getRequestHeaders().forEach((k, v) -> headers.put(k, v.get(0)));
            int status;
            try {
                WebhookSigner.verify(headers, body, SECRET, Clock.systemUTC());
                synchronized (this) {
                    verified.add(new Delivery(headers.getOrDefault("Webhook-id", headers.get("webhook-id")),
                            new String(body, java.nio.charset.StandardCharsets.UTF_8)));
                }
                status = 204;
            } catch (RuntimeException e) {
                synchronized (this) {
                    refused.add(e.getMessage());
                }
                status = 401;
            }
            exchange.sendResponseHeaders(status, -1);
            exchange.close();
        });
        server.start();
    }

    public static synchronized WebhookReceiver shared() {
        if (shared == null) {
            try {
                shared = new WebhookReceiver(0);
            } catch (IOException e) {
                throw new UncheckedIOException(e);
            }
        }
        return shared;
    }

    /** A receiver of the caller's own on {@code port} (0: any free one); close it after the test. */
    public static WebhookReceiver start(int port) {
        try {
            return new WebhookReceiver(port);
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        }
    }

    /**
     * Answers the next {@code count} requests with {@code status} (and a {@code Retry-After} header if
     * {@code retryAfter} is not null) without looking at them; a negative count fails every request.
     */
    public synchronized WebhookReceiver failFirst(int count, int status, String retryAfter) {
        this.failuresLeft = count < 0 ? Integer.MAX_VALUE : count;
        this.failStatus = status;
        this.failRetryAfter = retryAfter;
        return this;
    }

    /** The {@code webhook-id} of every request answered with the failure status, in order. */
    public synchronized List<String> failed() {
        return List.copyOf(failed);
    }

    @Override
    public void close() {
        server.stop(0);
    }

    public String url() {
        return "http://127.0.0.1:" + server.getAddress().getPort() + "/hooks/alerts";
    }

    public synchronized List<Delivery> verified() {
        return List.copyOf(verified);
    }

    public synchronized List<String> refused() {
        return List.copyOf(refused);
    }
}
