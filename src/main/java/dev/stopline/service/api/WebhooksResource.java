package dev.stopline.service.api;

import dev.stopline.service.alert.AlertDispatcher;
import jakarta.inject.Inject;
import jakarta.ws.rs.Consumes;
import jakarta.ws.rs.GET;
import jakarta.ws.rs.HeaderParam;
import jakarta.ws.rs.POST;
import jakarta.ws.rs.Path;
import jakarta.ws.rs.Produces;
import jakarta.ws.rs.core.HttpHeaders;
import jakarta.ws.rs.core.MediaType;
import jakarta.ws.rs.core.Response;
import org.eclipse.microprofile.openapi.annotations.Operation;

/**
 * The webhook endpoints: which are on, and switching one on again after it answered 410 Gone. An endpoint
 * stays off across restarts and for every instance until then (the database holds the switch).
 */
@Path("/api/webhooks")
@Produces(MediaType.APPLICATION_JSON)
public class WebhooksResource {
    @Inject
    AlertDispatcher dispatcher;
    @Inject
    ApiTokens tokens;

    /** The body of {@code POST /api/webhooks/enable}. */
    public record EnableRequest(String url) {
    }

    @GET
    @Operation(summary = "The configured webhook endpoints, each on or off (since when, why)",
            description = "Needs the token even where reads are open: receivers' URLs often carry a secret.")
    public Response list(@HeaderParam(HttpHeaders.AUTHORIZATION) String authorization) {
        if (!tokens.authorizes(authorization)) {
            return BearerTokenFilter.unauthorized();
        }
        return Response.ok(dispatcher.webhookEndpoints()).build();
    }

    @POST
    @Path("/enable")
    @Consumes(MediaType.APPLICATION_JSON)
    @Operation(summary = "Switch a configured webhook endpoint on again",
            description = "Alerts raised from now on are sent to it; deliveries abandoned while it was off stay so.")
    public Response enable(EnableRequest request) {
        if (request == null || request.url() == null || request.url().isBlank()) {
            return ApiError.response(ApiError.UNPROCESSABLE,
                    "the body must be {\"url\": \"<a configured webhook URL>\"}", null);
        }
        return dispatcher.enableWebhook(request.url().trim()).map(s -> Response.ok(s).build())
                .orElseGet(() -> ApiError.response(Response.Status.NOT_FOUND,
                        "no webhook endpoint " + request.url() + " is configured", null));
    }
}
