package dev.stopline.service.api;

import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.monitor.LookRecord;
import dev.stopline.plan.PlanException;
import dev.stopline.plan.PlanParser;
import dev.stopline.service.plans.PlanRegistry;
import dev.stopline.service.store.Store;
import jakarta.inject.Inject;
import jakarta.ws.rs.Consumes;
import jakarta.ws.rs.DefaultValue;
import jakarta.ws.rs.GET;
import jakarta.ws.rs.HeaderParam;
import jakarta.ws.rs.POST;
import jakarta.ws.rs.Path;
import jakarta.ws.rs.PathParam;
import jakarta.ws.rs.Produces;
import jakarta.ws.rs.QueryParam;
import jakarta.ws.rs.core.HttpHeaders;
import jakarta.ws.rs.core.MediaType;
import jakarta.ws.rs.core.Response;
import java.time.Clock;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.eclipse.microprofile.openapi.annotations.Operation;

/**
 * The REST API: experiments, their looks, alerts, and plan registration. The POST calls need the API's
 * bearer token ({@link BearerTokenFilter}); the audit trail records the token's name as the actor.
 */
@Path("/api")
@Produces(MediaType.APPLICATION_JSON)
public class ExperimentsResource {
    /** The most snapshot sequences one page of looks may cover. */
    static final int MAX_LOOKS_PAGE = 10_000;

    @Inject
    Store store;
    @Inject
    PlanRegistry plans;
    @Inject
    Clock clock;
    /** Mutating calls reach this class only with the token ({@link BearerTokenFilter}): they act as its name. */
    @Inject
    ApiTokens tokens;

    @GET
    @Path("/experiments")
    @Operation(summary = "Every registered experiment with its status, information fraction and open alerts")
    public List<ExperimentView.Summary> experiments() {
        List<ExperimentView.Summary> out = new ArrayList<>();
        for (Store.StoredPlan p : store.plans()) {
            out.add(summary(p));
        }
        return out;
    }

    @GET
    @Path("/experiments/{id}")
    @Operation(summary = "One experiment: plan, state, planned boundaries and the latest estimate per metric")
    public Response experiment(@PathParam("id") String id) {
        return store.plan(id).<Response>map(p -> {
            ExperimentMonitor m = plans.monitor(id);
            Store.StoredState st = store.state(id).orElse(null);
            List<LookRecord> looks = store.latestLooks(id);
            ExperimentView.Summary s = ExperimentView.summary(p, m, st, looks, openAlerts(id));
            return Response.ok(ExperimentView.detail(s, p, m, st, looks)).build();
        }).orElseGet(() -> notFound(id));
    }

    @GET
    @Path("/experiments/{id}/looks")
    @Operation(summary = "Every stored look of an experiment, oldest first (the alpha ledger of the primary)",
            description = "With limit: the looks of at most that many snapshot sequences from 'from' on; page on "
                    + "with from = the last sequence + 1 (an SPRT or a guardrail stores a look per snapshot).")
    public Response looks(@PathParam("id") String id, @QueryParam("from") Long from, @QueryParam("limit") Integer limit) {
        if (store.plan(id).isEmpty()) {
            return notFound(id);
        }
        if (from == null && limit == null) {
            return Response.ok(store.looks(id)).build();
        }
        if (limit != null && (limit < 1 || limit > MAX_LOOKS_PAGE)) {
            return ApiError.response(ApiError.UNPROCESSABLE, "limit must be between 1 and " + MAX_LOOKS_PAGE
                    + ", got " + limit, null);
        }
        return Response.ok(store.looks(id, from == null ? 0 : from, limit == null ? MAX_LOOKS_PAGE : limit)).build();
    }

    @GET
    @Path("/experiments/{id}/audit")
    @Operation(summary = "The append-only audit trail of an experiment's plan")
    public Response audit(@PathParam("id") String id) {
        if (store.plan(id).isEmpty()) {
            return notFound(id);
        }
        return Response.ok(store.audit(id)).build();
    }

    @GET
    @Path("/alerts")
    @Operation(summary = "Alerts, newest first, with their delivery status per channel")
    public List<Map<String, Object>> alerts(@QueryParam("experiment") String experiment,
                                            @QueryParam("limit") @DefaultValue("200") int limit) {
        List<Map<String, Object>> out = new ArrayList<>();
        for (Store.StoredAlert a : store.alerts(experiment, limit)) {
            out.add(Map.of("alert", a.alert(), "createdAt", a.createdAt(),
                    "acknowledgedAt", a.acknowledgedAt() == null ? "" : a.acknowledgedAt().toString(),
                    "acknowledgedBy", a.acknowledgedBy() == null ? "" : a.acknowledgedBy(),
                    "deliveries", store.deliveries(a.alert().id())));
        }
        return out;
    }

    @POST
    @Path("/alerts/{id: .+}/acknowledge")
    @Operation(summary = "Acknowledge an alert (the first acknowledgement is kept); the id contains slashes "
            + "(experiment/kind/metric/look) and is given as it is")
    public Response acknowledge(@PathParam("id") String id) {
        if (!store.acknowledge(id, tokens.name(), clock.instant())) {
            return ApiError.response(Response.Status.NOT_FOUND, "no alert " + id, null);
        }
        return Response.ok(store.alert(id).orElseThrow()).build();
    }

    @POST
    @Path("/plans")
    @Consumes({"application/yaml", "application/x-yaml", "text/yaml", MediaType.APPLICATION_JSON, MediaType.TEXT_PLAIN})
    @Operation(summary = "Register a stopping plan (YAML or JSON); refused with every problem listed if invalid, "
            + "409 if the plan is locked")
    public Response register(byte[] body, @HeaderParam(HttpHeaders.CONTENT_TYPE) String contentType) {
        try {
            PlanRegistry.Result r = plans.register(body, format(contentType), tokens.name());
            Response.Status status = switch (r.outcome()) {
                case CREATED -> Response.Status.CREATED;
                case LOCKED -> Response.Status.CONFLICT;
                default -> Response.Status.OK;
            };
            if (status == Response.Status.CONFLICT) {
                return ApiError.response(status, r.message(), null);
            }
            return Response.status(status).entity(r).build();
        } catch (PlanException e) {
            return ApiError.response(ApiError.UNPROCESSABLE, "the plan is not valid", e.problems());
        }
    }

    @POST
    @Path("/experiments/{id}/amendments")
    @Consumes({"application/yaml", "application/x-yaml", "text/yaml", MediaType.APPLICATION_JSON, MediaType.TEXT_PLAIN})
    @Operation(summary = "Amend a locked plan; keeps the alpha already spent and is recorded in the audit trail")
    public Response amend(@PathParam("id") String id, @QueryParam("reason") String reason, byte[] body,
                          @HeaderParam(HttpHeaders.CONTENT_TYPE) String contentType) {
        if (store.plan(id).isEmpty()) {
            return notFound(id);
        }
        try {
            return Response.ok(plans.amend(id, body, format(contentType), tokens.name(), reason)).build();
        } catch (PlanException e) {
            return ApiError.response(ApiError.UNPROCESSABLE, "the amendment is not acceptable",
                    e.problems());
        }
    }

    private ExperimentView.Summary summary(Store.StoredPlan p) {
        String id = p.experimentId();
        return ExperimentView.summary(p, plans.monitor(id), store.state(id).orElse(null), store.latestLooks(id),
                openAlerts(id));
    }

    private long openAlerts(String id) {
        return store.alerts(id, 1000).stream().filter(a -> a.acknowledgedAt() == null).count();
    }

    private static Response notFound(String id) {
        return ApiError.response(Response.Status.NOT_FOUND, "no experiment " + id + " is registered", null);
    }

    private static PlanParser.Format format(String contentType) {
        if (contentType != null && contentType.toLowerCase(java.util.Locale.ROOT).contains("json")) {
            return PlanParser.Format.JSON;
        }
        return contentType != null && contentType.toLowerCase(java.util.Locale.ROOT).contains("yaml")
                ? PlanParser.Format.YAML : PlanParser.Format.AUTO;
    }
}
