package dev.stopline.service.store;

import jakarta.enterprise.context.ApplicationScoped;
import jakarta.inject.Inject;
import org.eclipse.microprofile.health.HealthCheck;
import org.eclipse.microprofile.health.HealthCheckResponse;
import org.eclipse.microprofile.health.Readiness;

/**
 * Readiness check {@code database}: DOWN while the database does not answer ({@link Store#reachable()}: a
 * pooled connection that passes a 2 s validity check). While it is down the ingest holds its partition and
 * the API cannot answer, so the instance is not ready; it is still alive (a liveness check on the database
 * would only have a supervisor restart a healthy daemon during a database outage), and becomes ready again
 * by itself when the database is back.
 */
@Readiness
@ApplicationScoped
public class DatabaseReadiness implements HealthCheck {
    private final Store store;

    @Inject
    public DatabaseReadiness(Store store) {
        this.store = store;
    }

    @Override
    public HealthCheckResponse call() {
        return HealthCheckResponse.named("database").status(store.reachable()).build();
    }
}
