package dev.stopline.service.api;

import dev.stopline.plan.PlanProblem;
import jakarta.ws.rs.core.MediaType;
import jakarta.ws.rs.core.Response;
import java.util.List;

/** The body of every refused request: what is wrong, and for plans every problem with its path. */
public record ApiError(String error, List<PlanProblem> problems) {
    static Response response(Response.Status status, String error, List<PlanProblem> problems) {
        return Response.status(status).type(MediaType.APPLICATION_JSON)
                .entity(new ApiError(error, problems == null ? List.of() : problems)).build();
    }
}
