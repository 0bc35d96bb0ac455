package dev.stopline.service.web;

import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.monitor.LookRecord;
import dev.stopline.monitor.SampleRatioRecord;
import dev.stopline.plan.Plan;
import dev.stopline.plan.PlanParser;
import dev.stopline.service.api.ExperimentView;
import dev.stopline.service.plans.PlanRegistry;
import dev.stopline.service.store.Store;
import jakarta.inject.Inject;
import jakarta.ws.rs.GET;
import jakarta.ws.rs.Path;
import jakarta.ws.rs.PathParam;
import jakarta.ws.rs.Produces;
import jakarta.ws.rs.core.Response;
import java.time.Clock;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import org.eclipse.microprofile.openapi.annotations.Operation;

/**
 * The human status pages: the experiment list at {@code /} and one page per experiment. Thin: reads
 * the store and the registry, reuses {@link ExperimentView} for the numbers the JSON API shows, and
 * hands plain data to {@link StatusPages}.
 */
@Path("/")
@Produces(StatusResource.HTML)
public class StatusResource {
    static final String HTML = "text/html;charset=UTF-8";
    /** Alerts read per experiment, as the JSON API counts open alerts. */
    private static final int ALERT_LIMIT = 1000;

    @Inject
    Store store;
    @Inject
    PlanRegistry plans;
    @Inject
    Clock clock;

    @GET
    @Operation(summary = "Status page: every registered experiment with its state and open alerts (HTML)")
    public String index() {
        List<StatusPages.Row> rows = new ArrayList<>();
        for (Store.StoredPlan p : store.plans()) {
            String id = p.experimentId();
            ExperimentMonitor m = plans.monitor(id);
            List<Store.StoredAlert> alerts = store.alerts(id, ALERT_LIMIT);
            Map<String, Long> open = new LinkedHashMap<>();
            alerts.stream().filter(a -> a.acknowledgedAt() == null)
                    .forEach(a -> open.merge(a.alert().kind().wireName(), 1L, Long::sum));
            ExperimentView.Summary s = ExperimentView.summary(p, m, store.state(id).orElse(null), store.latestLooks(id),
                    open.values().stream().mapToLong(Long::longValue).sum());
            rows.add(new StatusPages.Row(s, plan(p, m).description(), open));
        }
        return StatusPages.index(rows, clock.instant());
    }

    @GET
    @Path("experiments/{id}")
    @Operation(summary = "Status page of one experiment: boundaries chart, alpha ledger, guardrails, alerts (HTML)")
    public Response experiment(@PathParam("id") String id) {
        Optional<Store.StoredPlan> stored = store.plan(id);
        if (stored.isEmpty()) {
            return Response.status(Response.Status.NOT_FOUND).type(HTML)
                    .entity(StatusPages.notFound(id, clock.instant())).build();
        }
        Store.StoredPlan p = stored.get();
        ExperimentMonitor m = plans.monitor(id);
        Store.StoredState st = store.state(id).orElse(null);
        // the primary's history for the chart and the ledger, the latest look per metric for the rest: a
        // guardrail's history (a row per snapshot) is not read for a page that shows its latest look only
        List<LookRecord> primary = store.looks(id, LookRecord.PRIMARY);
        List<LookRecord> latest = store.latestLooks(id);
        List<StatusPages.AlertItem> alerts = new ArrayList<>();
        long open = 0;
        for (Store.StoredAlert a : store.alerts(id, ALERT_LIMIT)) {
            alerts.add(new StatusPages.AlertItem(a, store.deliveries(a.alert().id())));
            open += a.acknowledgedAt() == null ? 1 : 0;
        }
        ExperimentView.Summary s = ExperimentView.summary(p, m, st, latest, open);
        ExperimentView.Detail detail = ExperimentView.detail(s, p, m, st, latest);
        SampleRatioRecord srm = m == null || st == null || st.state().lastSnapshot() == null ? null
                : m.checkSampleRatio(st.state().lastSnapshot());
        StatusPages.ExperimentPage page = new StatusPages.ExperimentPage(detail, plan(p, m), primary, srm, alerts,
                store.audit(id), clock.instant());
        return Response.ok(StatusPages.experiment(page), HTML).build();
    }

    private static Plan plan(Store.StoredPlan p, ExperimentMonitor m) {
        return m != null ? m.plan() : PlanParser.parseJson(p.planJson());
    }
}
