package dev.stopline.service.web;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.demo.BookshopScenario;
import dev.stopline.monitor.Alert;
import dev.stopline.monitor.Evaluation;
import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.monitor.LookRecord;
import dev.stopline.monitor.MonitorState;
import dev.stopline.plan.Guardrail;
import dev.stopline.plan.Plan;
import dev.stopline.plan.PlanCanonical;
import dev.stopline.plan.PlanParser;
import dev.stopline.plan.Primary;
import dev.stopline.service.api.ExperimentView;
import dev.stopline.service.store.Store;
import dev.stopline.stats.sprt.SprtDecision;
import dev.stopline.stats.sprt.WaldSprt;
import dev.stopline.wire.Snapshot;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/**
 * The pages rendered from real evaluations: the example plans of {@code config/plans} monitored over
 * the seeded bookshop scenario by the same {@link ExperimentMonitor} the daemon uses, without the
 * daemon. Expected numbers are the monitor's own look records.
 */
class StatusPagesTest {
    private static final long SEED = 20260301L; // any fixed seed: the scenario is deterministic
    private static final Instant START = Instant.parse("2026-03-02T00:00:00Z");
    private static final int HOURS = 48;
    private static final Map<String, Fixture> FIXTURES = new LinkedHashMap<>();

    record Fixture(Plan plan, String source, ExperimentMonitor monitor, MonitorState state, List<LookRecord> looks,
                   List<Alert> alerts) {
        List<LookRecord> primary() {
            return looks.stream().filter(l -> LookRecord.PRIMARY.equals(l.role())).toList();
        }
    }

    @BeforeAll
    static void monitorTheScenario() throws Exception {
        BookshopScenario scenario = BookshopScenario.seeded(SEED, START);
        Map<String, MonitorState> states = new LinkedHashMap<>();
        Map<String, List<LookRecord>> looks = new LinkedHashMap<>();
        Map<String, List<Alert>> alerts = new LinkedHashMap<>();
        Map<String, ExperimentMonitor> monitors = new LinkedHashMap<>();
        Map<String, String> sources = new LinkedHashMap<>();
        for (String id : scenario.experimentIds()) {
            String yaml = Files.readString(Path.of("config/plans", id + ".yaml"));
            ExperimentMonitor m = ExperimentMonitor.of(PlanParser.parseYaml(yaml), 1);
            monitors.put(id, m);
            sources.put(id, yaml);
            states.put(id, m.initialState());
            looks.put(id, new ArrayList<>());
            alerts.put(id, new ArrayList<>());
        }
        for (int h = 0; h < HOURS; h++) {
            for (Snapshot s : scenario.tick()) {
                Evaluation e = monitors.get(s.experiment()).evaluate(states.get(s.experiment()), s);
                states.put(s.experiment(), e.state());
                looks.get(s.experiment()).addAll(e.looks());
                alerts.get(s.experiment()).addAll(e.alerts());
            }
        }
        for (String id : monitors.keySet()) {
            FIXTURES.put(id, new Fixture(monitors.get(id).plan(), sources.get(id), monitors.get(id), states.get(id),
                    looks.get(id), alerts.get(id)));
        }
    }

    static StatusPages.ExperimentPage page(Fixture f, Plan shown) {
        Instant now = START.plusSeconds(3600L * HOURS + 60);
        Store.StoredPlan sp = new Store.StoredPlan(shown.experiment(), 1, PlanCanonical.toJson(f.plan()), f.source(),
                PlanCanonical.sha256(f.plan()), START, START.plusSeconds(3600));
        String status = f.state().primaryDecision() != null ? f.state().primaryDecision().wireName() : "running";
        Store.StoredState st = new Store.StoredState(f.state(), Store.Position.NONE, status, now);
        List<StatusPages.AlertItem> items = new ArrayList<>();
        for (Alert a : f.alerts()) {
            items.add(new StatusPages.AlertItem(new Store.StoredAlert(a, a.observedAt(), null, null), List.of(
                    new Store.DeliveryStatus("log", "delivered", 1, null, a.observedAt()),
                    new Store.DeliveryStatus("webhook", "abandoned", 6, "HTTP 500 <b>down</b>", null))));
        }
        ExperimentView.Summary s = ExperimentView.summary(sp, f.monitor(), st, f.looks(), items.size());
        ExperimentView.Detail d = ExperimentView.detail(s, sp, f.monitor(), st, f.looks());
        List<Store.AuditEntry> audit = List.of(new Store.AuditEntry(1, shown.experiment(), START, "file:x.yaml",
                "registered", 1, PlanCanonical.sha256(f.plan()), null, null));
        return new StatusPages.ExperimentPage(d, shown, f.looks(), f.monitor().checkSampleRatio(
                f.state().lastSnapshot()), items, audit, now);
    }

    @Test
    void groupSequentialPage_ledgerRows_equalThePrimaryLookRecords() {
        Fixture f = FIXTURES.get("checkout-redesign");
        List<LookRecord> primary = f.primary();
        assertTrue(primary.size() >= 2, "the scenario reaches at least two formal looks in " + HOURS + " hours");
        String html = StatusPages.experiment(page(f, f.plan()));
        for (LookRecord l : primary) {
            String row = row(html, "data-look=\"" + l.look() + "\"");
            assertEquals(Double.toString(l.z()), value(row, "z"), "z of look " + l.look());
            assertEquals(Double.toString(l.efficacyZ()), value(row, "efficacy"), "boundary of look " + l.look());
            assertEquals(Double.toString(l.cumulativeAlphaSpent()), value(row, "alpha"), "alpha of look " + l.look());
            assertEquals(Double.toString(l.informationFraction()), value(row, "fraction"));
            assertTrue(row.contains(">" + String.format(Locale.ROOT, "%.2f", l.z()) + "<"), row);
            assertTrue(row.contains(l.decision().wireName().replace('-', ' ').split(" ")[0]), row);
        }
        String svg = html.substring(html.indexOf("<svg xmlns"), html.indexOf("</svg>") + 6);
        assertEquals(primary.size(), BoundaryChartTest.polyline(svg, "observed").size(), "one path point per look");
        assertTrue(svg.contains("data-series=\"efficacy-lower\""), "two-sided plan: both efficacy boundaries");
        boolean stopped = primary.get(primary.size() - 1).decision().endsPrimary();
        assertEquals(!stopped, html.contains("data-planned="), "planned rows only while the primary runs");
    }

    @Test
    void groupSequentialPage_marksTheCrossingLook_whenTheScenarioStopsForEfficacy() {
        Fixture f = FIXTURES.get("checkout-redesign");
        LookRecord last = f.primary().get(f.primary().size() - 1);
        // BookshopScenario: a 10.0% -> 11.2% lift, expected to stop for efficacy at an interim look
        assertEquals("efficacy", last.decision().wireName(), "scenario outcome");
        String html = StatusPages.experiment(page(f, f.plan()));
        assertTrue(html.contains("<g class=\"crossing\" data-look=\"" + f.primary().size() + "\""));
        assertTrue(html.contains("look " + last.look() + ": efficacy"));
    }

    @Test
    void guardrailAndSampleRatioSections_showTheLatestRecordAndTheCheck() {
        Fixture f = FIXTURES.get("recommendations-v2");
        String html = StatusPages.experiment(page(f, f.plan()));
        LookRecord load = null;
        for (LookRecord l : f.looks()) {
            if ("page_load_ms".equals(l.metric())) {
                load = l;
            }
        }
        String row = row(html, "data-guardrail=\"page_load_ms\"");
        assertEquals(Double.toString(load.intervalLower()), value(row, "harm-lower"));
        assertEquals(Double.toString(load.alwaysValidPValue()), value(row, "p"));
        // BookshopScenario: product pages about 14% slower against a 5% margin: harm is expected
        assertTrue(row.contains("guardrail harm"), row);
        assertTrue(row.contains("(5% of control)"), row);
        long control = f.state().lastSnapshot().arms().get("control").units();
        assertTrue(row(html, "data-arm=\"control\"").contains("data-value=\"" + control + "\""));
        assertTrue(html.contains("data-series=\"alpha\""), "mixture-SPRT primary: p against alpha");
        assertTrue(html.contains("webhook: <span class=\"st st-bad\">\u2716 abandoned</span>"));
        assertTrue(html.contains("HTTP 500 &lt;b&gt;down&lt;/b&gt;"), "delivery errors are escaped");
    }

    @Test
    void longHistories_areThinnedForTheChart_keepingFirstLastAndTheCrossing() {
        List<LookRecord> primary = FIXTURES.get("recommendations-v2").primary();   // mixture SPRT: a look per snapshot
        assertTrue(primary.size() >= 30, "looks: " + primary.size());
        int crossing = primary.size() / 3 + 1;
        StatusPages.Thinned t = StatusPages.thin(primary, crossing, 10);
        assertTrue(t.looks().size() <= 10 && t.looks().size() >= 9, "size " + t.looks().size());
        assertSame(primary.get(0), t.looks().get(0));
        assertSame(primary.get(primary.size() - 1), t.looks().get(t.looks().size() - 1));
        assertSame(primary.get(crossing), t.looks().get(t.crossing()), "the crossing is kept and found");
        for (int i = 1; i < t.looks().size(); i++) {
            assertTrue(t.looks().get(i).sequence() > t.looks().get(i - 1).sequence(), "in order");
        }
        assertEquals(-1, StatusPages.thin(primary, -1, 10).crossing());
        assertSame(primary, StatusPages.thin(primary, 3, primary.size()).looks(), "short enough: untouched");
    }

    @Test
    void giftWrapPage_showsTheSampleRatioMismatch_withSymbolAndWord() {
        Fixture f = FIXTURES.get("gift-wrap-upsell");
        String html = StatusPages.experiment(page(f, f.plan()));
        // BookshopScenario: 53% of visitors go to the control against a 50/50 plan
        assertTrue(html.contains("\u26a0 mismatch"), "sample-ratio verdict");
        assertTrue(html.contains("\u26a0 sample ratio"), "sample-ratio alert");
    }

    @Test
    void waldThresholdsOnTheZScale_agreeWithTheSprtDecision() {
        Fixture f = FIXTURES.get("gift-wrap-upsell");
        Primary p = f.plan().primary();
        WaldSprt.NormalDifference test = WaldSprt.of(p.alpha(), p.sprt().beta())
                .normalDifference(p.sprt().minimumEffect());
        double eps = 1e-6; // well inside double precision of z ~ 1
        for (LookRecord l : f.primary()) {
            BoundaryChart.Bound b = StatusPages.waldBound(p, l);
            double v = l.standardError() * l.standardError();
            assertEquals(SprtDecision.ACCEPT_H1, test.decide((b.efficacyZ() + eps) * l.standardError(), v));
            assertEquals(SprtDecision.CONTINUE, test.decide((b.efficacyZ() - eps) * l.standardError(), v));
            assertEquals(SprtDecision.ACCEPT_H0, test.decide((b.futilityZ() - eps) * l.standardError(), v));
            assertEquals(SprtDecision.CONTINUE, test.decide((b.futilityZ() + eps) * l.standardError(), v));
        }
    }

    @Test
    void hostileNames_inPlanAndMetrics_areEscapedEverywhere() {
        Fixture f = FIXTURES.get("checkout-redesign");
        String evil = "<script>alert(\"x\")</script>";
        String evilMetric = "orders\"><img src=x onerror=alert(1)>";
        Primary p = f.plan().primary();
        Primary hp = new Primary(evilMetric, p.type(), p.method(), p.alpha(), p.sides(), p.spending(), p.boundary(),
                p.looks(), p.maxUnitsPerArm(), p.power(), p.minimumEffect(), p.baselineRate(), p.baselineMean(),
                p.sd(), p.futility(), p.sprt(), p.mixtureSprt());
        Guardrail g = f.plan().guardrails().get(0);
        Guardrail hg = new Guardrail("load'<b>", g.type(), g.harmful(), g.margin(), g.relative(), g.alpha(), g.tau());
        Plan hostile = new Plan("exp-" + evil, f.plan().allocation(), f.plan().control(), hp, List.of(hg),
                f.plan().sampleRatio(), "desc " + evil, "owner " + evil);
        String html = StatusPages.experiment(page(f, hostile));
        assertFalse(html.contains("<script>"), "no script element");
        assertFalse(html.contains("<img"), "no injected element");
        assertFalse(html.contains("load'<b>"), "guardrail metric escaped");
        assertTrue(html.contains("desc &lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt;"));
        assertTrue(html.contains("orders&quot;&gt;&lt;img src=x onerror=alert(1)&gt;"));
        assertTrue(html.contains("load&#39;&lt;b&gt;"));

        ExperimentView.Summary s = page(f, hostile).detail().summary();
        String index = StatusPages.index(List.of(new StatusPages.Row(s, hostile.description(), Map.of())), START);
        assertFalse(index.contains("<script>"));
        assertFalse(index.contains("<img"));
        assertFalse(StatusPages.notFound(evil, START).contains("<script>"));
    }

    @Test
    void index_listsEachExperimentWithItsStateFractionAndOpenAlertKinds() {
        List<StatusPages.Row> rows = new ArrayList<>();
        for (Fixture f : FIXTURES.values()) {
            StatusPages.ExperimentPage page = page(f, f.plan());
            Map<String, Long> kinds = new LinkedHashMap<>();
            f.alerts().forEach(a -> kinds.merge(a.kind().wireName(), 1L, Long::sum));
            rows.add(new StatusPages.Row(page.detail().summary(), f.plan().description(), kinds));
        }
        String html = StatusPages.index(rows, START);
        for (StatusPages.Row r : rows) {
            String row = row(html, "data-experiment=\"" + r.summary().experiment() + "\"");
            assertTrue(row.contains("href=\"/experiments/" + r.summary().experiment() + "\""), row);
            assertEquals(Double.toString(r.summary().informationFraction()), value(row, "fraction"));
            long open = r.openAlertKinds().values().stream().mapToLong(Long::longValue).sum();
            assertTrue(open == 0 ? row.contains(">none<") : row.contains("<strong class=\"count\">" + open + "<"), row);
        }
        assertTrue(row(html, "data-experiment=\"recommendations-v2\"").contains("\u25b2 guardrail"));
    }

    @Test
    void experimentWithoutSnapshots_showsThePlannedLooks_andSaysThatNothingWasSeenYet() {
        Fixture f = FIXTURES.get("checkout-redesign");
        Store.StoredPlan sp = new Store.StoredPlan(f.plan().experiment(), 1, PlanCanonical.toJson(f.plan()),
                f.source(), PlanCanonical.sha256(f.plan()), START, null);
        ExperimentView.Summary s = ExperimentView.summary(sp, f.monitor(), null, List.of(), 0);
        ExperimentView.Detail d = ExperimentView.detail(s, sp, f.monitor(), null, List.of());
        String html = StatusPages.experiment(new StatusPages.ExperimentPage(d, f.plan(), List.of(), null, List.of(),
                List.of(), START));
        assertTrue(html.contains("\u25cb waiting for data"), "state in symbol and words");
        assertTrue(html.contains("no look taken yet"), "empty chart says so");
        // checkout-redesign.yaml: five equally spaced looks, the first at 0.2
        assertTrue(html.contains("The first formal look is taken at information fraction 0.20."));
        for (int k = 1; k <= 5; k++) {
            assertTrue(html.contains("data-planned=\"" + k + "\""), "planned look " + k);
        }
        assertTrue(html.contains("No snapshot yet."));
        assertTrue(html.contains("No alert has been raised."));
        assertTrue(html.contains("not locked yet"));
    }

    @Test
    void notFoundPage_namesTheIdAndLinksBack() {
        String html = StatusPages.notFound("no-such-thing", START);
        assertTrue(html.contains("<code>no-such-thing</code>"));
        assertTrue(html.contains("href=\"/\""));
    }

    // ------------------------------------------------------------------ helpers

    /** The {@code <tr>} that carries an attribute. */
    static String row(String html, String attribute) {
        int at = html.indexOf("<tr " + attribute);
        assertTrue(at >= 0, "no row " + attribute);
        return html.substring(at, html.indexOf("</tr>", at));
    }

    /** The {@code data-value} of the cell with a {@code data-field}. */
    static String value(String row, String field) {
        Matcher m = Pattern.compile("data-field=\"" + field + "\" data-value=\"([^\"]*)\"").matcher(row);
        assertTrue(m.find(), "no field " + field + " in " + row);
        return m.group(1);
    }
}
