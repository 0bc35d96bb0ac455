package dev.stopline.service.api;

import dev.stopline.plan.PlanProblem;
import jakarta.ws.rs.core.MediaType;
import jakarta.ws.rs.core.Response;
import java.util.List;

/** The body of every refused request: what is wrong, and for plans every problem with its path. */
public record ApiError(String error, List<PlanProblem> problems) {
    /** 422: the request was understood but its content is not acceptable (RFC 9110 section 15.5.21). */
    static final int UNPROCESSABLE = 422;

    static Response response(Response.Status status, String error, List<PlanProblem> problems) {
        return response(status.getStatusCode(), error, problems);
    }

    /**
     * By number, for codes {@link Response.Status} has no constant for: {@code Status.fromStatusCode(422)} is
     * null, and a null status made every refused plan a 500 instead of the list of its problems.
     */
    static Response response(int status, String error, List<PlanProblem> problems) {
        return Response.status(status).type(MediaType.APPLICATION_JSON)
                .entity(new ApiError(error, problems == null ? List.of() : problems)).build();
    }
}
