package dev.stopline.service.api;

import dev.stopline.plan.PlanProblem;
import jakarta.ws.rs.core.MediaType;
import jakarta.ws.rs.core.Response;
import java.util.List;

/** The body of every refused request: what is wrong, and for plans every problem with its path. */
public record ApiError(String error, List<PlanProblem> problems) {
    /** 422: the request is well-formed but its content breaks a rule (not in {@link Response.Status}). */
    static final int UNPROCESSABLE = 422;

    static Response response(Response.Status status, String error, List<PlanProblem> problems) {
        return response(status.getStatusCode(), error, problems);
    }

    static Response response(int status, String error, List<PlanProblem> problems) {
        return Response.status(status).type(MediaType.APPLICATION_JSON)
                .entity(new ApiError(error, problems == null ? List.of() : problems)).build();
    }
}
