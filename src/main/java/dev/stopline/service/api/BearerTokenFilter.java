package dev.stopline.service.api;

import jakarta.annotation.Priority;
import jakarta.inject.Inject;
import jakarta.ws.rs.Priorities;
import jakarta.ws.rs.container.ContainerRequestContext;
import jakarta.ws.rs.container.ContainerRequestFilter;
import jakarta.ws.rs.core.HttpHeaders;
import jakarta.ws.rs.core.MediaType;
import jakarta.ws.rs.core.Response;
import jakarta.ws.rs.ext.Provider;
import java.util.Locale;
import java.util.Set;

/**
 * Bearer-token access control for the REST resources ({@link ApiTokens}): every call that changes
 * something (POST, PUT, PATCH, DELETE) needs {@code Authorization: Bearer <token>}; read-only calls
 * (GET, HEAD) only when {@code stopline.api.protect-reads=true}. A refused call gets 401 with the body
 * {@code {"error":"unauthorized"}} and nothing else: no hint whether a token was missing, malformed or
 * wrong. Health, metrics and OpenAPI under {@code /q} are not REST resources and stay open, so probes
 * and scrapers need no secret.
 */
@Provider
@Priority(Priorities.AUTHENTICATION)
public class BearerTokenFilter implements ContainerRequestFilter {
    private static final Set<String> READS = Set.of("GET", "HEAD", "OPTIONS");

    @Inject
    ApiTokens tokens;

    @Override
    public void filter(ContainerRequestContext request) {
        if (!allowed(tokens, request.getMethod(), request.getHeaderString(HttpHeaders.AUTHORIZATION))) {
            request.abortWith(unauthorized());
        }
    }

    /** The decision alone: open reads pass, everything else needs the token. */
    static boolean allowed(ApiTokens tokens, String method, String authorization) {
        boolean read = READS.contains(method.toUpperCase(Locale.ROOT));
        return (read && !tokens.protectReads()) || tokens.authorizes(authorization);
    }

    static Response unauthorized() {
        return Response.status(Response.Status.UNAUTHORIZED).header(HttpHeaders.WWW_AUTHENTICATE, "Bearer")
                .type(MediaType.APPLICATION_JSON).entity("{\"error\":\"unauthorized\"}").build();
    }
}
