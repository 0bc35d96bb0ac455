package dev.stopline.service.web;

import static dev.stopline.service.web.Html.esc;
import static dev.stopline.service.web.Html.fixed;
import static dev.stopline.service.web.Html.prob;
import static dev.stopline.service.web.Html.raw;
import static dev.stopline.service.web.Html.time;

import dev.stopline.monitor.ExperimentMonitor;
import dev.stopline.monitor.Decision;
import dev.stopline.monitor.LookRecord;
import dev.stopline.monitor.SampleRatioRecord;
import dev.stopline.plan.Guardrail;
import dev.stopline.plan.Method;
import dev.stopline.plan.Plan;
import dev.stopline.plan.Primary;
import dev.stopline.service.api.ExperimentView;
import dev.stopline.service.store.Store;
import dev.stopline.stats.sprt.WaldSprt;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.List;
import java.util.Locale;
import java.util.Map;

/**
 * The status pages as HTML strings, from plain data: no framework, no I/O, so that every page can be
 * rendered and checked in a unit test. One stylesheet inline, no scripts, no external resources; the
 * pages refresh themselves every {@value #REFRESH_SECONDS} seconds with a meta refresh.
 *
 * <p>Every state is shown by a symbol and a word, never by colour alone; every value that came from
 * a plan, a snapshot or the database is escaped by {@link Html#esc}.
 */
public final class StatusPages {
    public static final int REFRESH_SECONDS = 60;
    /** How many looks of an SPRT primary (one per snapshot) the evidence table shows, newest last. */
    static final int SPRT_ROWS = 12;
    /** The most looks the primary's chart draws (more are thinned evenly). */
    static final int CHART_LOOKS = 600;

    private StatusPages() {
    }

    /** One row of the index: the API summary and the open (unacknowledged) alerts by kind. */
    public record Row(ExperimentView.Summary summary, String description, Map<String, Long> openAlertKinds) {
    }

    /** A stored alert with its delivery status per channel. */
    public record AlertItem(Store.StoredAlert stored, List<Store.DeliveryStatus> deliveries) {
    }

    /**
     * Everything the experiment page shows.
     *
     * @param detail      the API detail (summary, planned boundaries, latest look per metric, units)
     * @param plan        the plan as parsed
     * @param looks       the primary's looks, oldest first (other looks are ignored: the detail holds the latest)
     * @param sampleRatio the sample-ratio check of the last snapshot, or null before the first
     * @param alerts      alerts, newest first
     * @param audit       the audit trail, oldest first
     * @param now         when the page is rendered
     */
    public record ExperimentPage(ExperimentView.Detail detail, Plan plan, List<LookRecord> looks,
                                 SampleRatioRecord sampleRatio, List<AlertItem> alerts, List<Store.AuditEntry> audit,
                                 Instant now) {
    }

    // ------------------------------------------------------------------ index

    public static String index(List<Row> rows, Instant now) {
        StringBuilder b = new StringBuilder(16384);
        head(b, "Experiments \u00b7 Stopline", now, null);
        b.append("<main><h1>Experiments</h1><p class=\"lede\">").append(rows.size())
                .append(rows.size() == 1 ? " experiment" : " experiments")
                .append(" registered. Open an experiment for its boundaries, alpha ledger, guardrails and alerts."
                        + "</p>");
        if (rows.isEmpty()) {
            b.append("<p class=\"empty\">No plans are registered yet. Put plan files in the plans directory or "
                    + "POST one to <code>/api/plans</code>.</p>");
        } else {
            b.append("<section class=\"list-card\"><div class=\"scroll\"><table class=\"list\"><thead><tr><th>Experiment</th><th>State</th>"
                    + "<th>Primary</th><th>Information fraction</th><th class=\"num\">Looks</th>"
                    + "<th>Latest decision</th><th>Open alerts</th><th>Updated</th></tr></thead><tbody>");
            for (Row r : rows) {
                indexRow(b, r);
            }
            b.append("</tbody></table></div></section>");
        }
        b.append("</main>");
        foot(b, now, "/api/experiments");
        return b.toString();
    }

    private static void indexRow(StringBuilder b, Row r) {
        ExperimentView.Summary s = r.summary();
        b.append("<tr data-experiment=\"").append(esc(s.experiment())).append("\"><td><a class=\"exp\" href=\"/experiments/")
                .append(esc(s.experiment())).append("\">").append(esc(s.experiment())).append("</a>");
        if (r.description() != null && !r.description().isBlank()) {
            b.append("<div class=\"sub\">").append(esc(r.description())).append("</div>");
        }
        b.append("</td><td>").append(badge(s.status())).append("</td><td><span class=\"method\">")
                .append(esc(s.method())).append("</span><div class=\"sub\">").append(esc(s.metric()))
                .append("</div></td><td>").append(meter(s.informationFraction())).append("</td><td class=\"num\">");
        if (s.looksTaken() != null) {
            b.append(s.looksTaken()).append(" / ").append(s.plannedLooks());
        } else {
            b.append("<span class=\"muted\" title=\"every snapshot is a look\">continuous</span>");
        }
        b.append("</td><td>").append(s.latestDecision() == null ? "<span class=\"muted\">no look yet</span>"
                : decision(s.latestDecision())).append("</td><td>");
        if (r.openAlertKinds().isEmpty()) {
            b.append("<span class=\"muted\">none</span>");
        } else {
            long total = r.openAlertKinds().values().stream().mapToLong(Long::longValue).sum();
            b.append("<strong class=\"count\">").append(total).append("</strong> ");
            r.openAlertKinds().forEach((kind, n) -> b.append("<span class=\"kind\">").append(alertKind(kind))
                    .append(n > 1 ? " \u00d7" + n : "").append("</span> "));
        }
        b.append("</td><td class=\"time\">").append(time(s.updatedAt())).append("</td></tr>");
    }

    // ------------------------------------------------------------------ experiment

    public static String experiment(ExperimentPage page) {
        ExperimentView.Summary s = page.detail().summary();
        Plan plan = page.plan();
        StringBuilder b = new StringBuilder(65536);
        head(b, s.experiment() + " \u00b7 Stopline", page.now(), s.experiment());
        b.append("<main><header class=\"exp-head\"><div><h1>").append(esc(s.experiment())).append("</h1>");
        if (plan.description() != null) {
            b.append("<p class=\"lede\">").append(esc(plan.description())).append("</p>");
        }
        if (plan.owner() != null) {
            b.append("<p class=\"sub\">Owner: ").append(esc(plan.owner())).append("</p>");
        }
        b.append("</div><div class=\"state\">").append(badge(s.status())).append("</div></header>");
        facts(b, page);
        chart(b, page);
        ledger(b, page);
        guardrails(b, page);
        sampleRatio(b, page);
        alerts(b, page);
        planSource(b, page);
        audit(b, page);
        b.append("</main>");
        foot(b, page.now(), "/api/experiments/" + s.experiment());
        return b.toString();
    }

    private static void facts(StringBuilder b, ExperimentPage page) {
        ExperimentView.Summary s = page.detail().summary();
        Primary p = page.plan().primary();
        b.append("<dl class=\"facts\">");
        fact(b, "Primary metric", esc(p.metric()) + " <span class=\"muted\">" + esc(p.type() == null ? null
                : p.type().name().toLowerCase(Locale.ROOT)) + "</span>");
        fact(b, "Method", esc(s.method()));
        fact(b, "Level", "alpha " + BoundaryChart.trim(p.alpha()) + ", " + (sides(p) == 2 ? "two-sided" : "one-sided"));
        fact(b, "Information fraction", meter(s.informationFraction()));
        if (s.looksTaken() != null) {
            fact(b, "Looks", s.looksTaken() + " of " + s.plannedLooks());
            fact(b, "Alpha spent", "<span data-field=\"alpha-spent\" data-value=\"" + raw(s.cumulativeAlphaSpent())
                    + "\">" + prob(s.cumulativeAlphaSpent()) + "</span> <span class=\"muted\">of "
                    + BoundaryChart.trim(p.alpha()) + "</span>");
        }
        fact(b, "Latest decision", s.latestDecision() == null ? "<span class=\"muted\">no look yet</span>"
                : decision(s.latestDecision()));
        fact(b, "Snapshots", String.valueOf(s.snapshots()));
        fact(b, "Last snapshot", "<span title=\"" + time(s.lastObservedAt()) + "\">" + Html.minute(s.lastObservedAt())
                + "</span>");
        fact(b, "Maximum size", String.format(Locale.ROOT, "%,d <span class=\"muted\">per arm</span>",
                page.detail().maxUnitsPerArm()));
        fact(b, "Plan", "version " + s.planVersion() + (s.locked()
                ? " \u00b7 <span title=\"changes need an amendment\">locked</span>" : " \u00b7 not locked yet"));
        b.append("</dl>");
    }

    private static void fact(StringBuilder b, String label, String html) {
        b.append("<div><dt>").append(esc(label)).append("</dt><dd>").append(html).append("</dd></div>");
    }

    // ------------------------------------------------------------------ chart

    private static void chart(StringBuilder b, ExperimentPage page) {
        Primary p = page.plan().primary();
        String svg = chartOf(page).svg();
        b.append("<section id=\"chart\"><h2>").append(p.method() == Method.MIXTURE_SPRT
                ? "Always-valid p-value" : "z statistic against the boundaries").append("</h2><div class=\"chart-wrap\">"
                + "<figure>").append(svg).append("<figcaption>");
        legend(b, p.method(), sides(p), svg.contains("-planned\""));
        b.append("</figcaption></figure>");
        reading(b, page);
        b.append("</div></section>");
    }

    /** The numbers of the last look beside the chart, in words. */
    private static void reading(StringBuilder b, ExperimentPage page) {
        Primary p = page.plan().primary();
        List<LookRecord> primary = primaryLooks(page.looks());
        b.append("<aside class=\"reading\"><h3>At the last look</h3>");
        if (primary.isEmpty()) {
            List<ExperimentView.BoundaryPoint> planned = page.detail().plannedBoundaries();
            b.append("<p class=\"muted\">No look yet.");
            if (!planned.isEmpty()) {
                b.append(" The first formal look is taken at information fraction ")
                        .append(fixed(planned.get(0).informationFraction(), 2)).append('.');
            }
            b.append("</p></aside>");
            return;
        }
        LookRecord l = primary.get(primary.size() - 1);
        int sides = sides(p);
        b.append("<dl>");
        fact(b, "Look", l.look() + " <span class=\"muted\">at fraction " + fixed(l.informationFraction(), 3)
                + "</span>");
        fact(b, "z statistic", fixed(l.z(), 2));
        fact(b, "Difference", signed(l.estimate()) + interval(l.intervalLower(), l.intervalUpper()));
        if (p.method() == Method.GROUP_SEQUENTIAL) {
            fact(b, "Efficacy boundary", (sides == 2 ? "\u00b1" : "") + fixed(l.efficacyZ(), 3));
            fact(b, "Alpha spent", prob(l.cumulativeAlphaSpent()) + " <span class=\"muted\">of "
                    + BoundaryChart.trim(p.alpha()) + "</span>");
            if (l.adjustedPValue() != null) {
                fact(b, "Adjusted p (stage-wise)", prob(l.adjustedPValue()));
            }
            if (l.medianUnbiasedEstimate() != null) {
                fact(b, "Median-unbiased estimate", signed(l.medianUnbiasedEstimate()));
            }
            if (l.conditionalPowerCurrent() != null) {
                fact(b, "Conditional power", fixed(100 * l.conditionalPowerCurrent(), 1) + "% <span class=\"muted\">"
                        + "current trend; " + fixed(100 * orNaN(l.conditionalPowerDesign()), 1) + "% design effect"
                        + "</span>");
            }
            if (!l.decision().endsPrimary()) {
                page.detail().plannedBoundaries().stream().filter(bp -> bp.informationFraction()
                        > l.informationFraction()).findFirst().ifPresent(bp -> fact(b, "Next look",
                        "at fraction " + fixed(bp.informationFraction(), 2) + " <span class=\"muted\">planned boundary "
                                + (sides == 2 ? "\u00b1" : "") + fixed(bp.efficacyZ(), 3) + "</span>"));
            }
        } else if (p.method() == Method.MIXTURE_SPRT) {
            fact(b, "Always-valid p", prob(l.alwaysValidPValue()) + " <span class=\"muted\">stops at "
                    + BoundaryChart.trim(p.alpha()) + "</span>");
        } else {
            BoundaryChart.Bound w = waldBound(p, l);
            fact(b, "Thresholds (z)", fixed(w.futilityZ(), 2) + " and " + fixed(w.efficacyZ(), 2));
        }
        fact(b, "Decision", decision(l.decision().wireName()));
        b.append("</dl></aside>");
    }

    private static void legend(StringBuilder b, Method method, int sides, boolean plannedShown) {
        b.append("<ul class=\"legend\">");
        legendItem(b, "#1d232b", null, "2.6", "observed " + (method == Method.MIXTURE_SPRT ? "always-valid p" : "z")
                + " at each look (dots)");
        if (method == Method.MIXTURE_SPRT) {
            legendItem(b, "#0b6e4f", "9 5", "1.8", "alpha: the test stops for efficacy when p reaches it");
        } else {
            String sprt = method == Method.SPRT ? " (Wald's thresholds on the z scale at each look)" : "";
            legendItem(b, "#0b6e4f", "9 5", "2", (sides == 2 ? "efficacy boundaries, both signs" : "efficacy boundary")
                    + sprt);
            legendItem(b, "#a14d00", "1 5", "2.2", method == Method.SPRT ? "futility: accept no lift below it"
                    : sides == 2 ? "futility band: stop for futility inside it" : "futility boundary");
            if (plannedShown) {
                legendItem(b, "#0b6e4f", "9 5", "1.3", "thinner: planned boundaries of looks not taken yet");
            }
        }
        b.append("<li><span class=\"sym\">\u25c9</span> ring: the look that crossed a boundary</li></ul>");
    }

    private static void legendItem(StringBuilder b, String colour, String dash, String width, String text) {
        b.append("<li><svg width=\"34\" height=\"10\" aria-hidden=\"true\"><line x1=\"1\" y1=\"5\" x2=\"33\" y2=\"5\" "
                + "stroke=\"").append(colour).append("\" stroke-width=\"").append(width).append('"');
        if (dash != null) {
            b.append(" stroke-dasharray=\"").append(dash).append("\" stroke-linecap=\"round\"");
        }
        b.append("/></svg> ").append(esc(text)).append("</li>");
    }

    /** The chart of the primary: z against boundaries, or the always-valid p against alpha. */
    static BoundaryChart chartOf(ExperimentPage page) {
        Primary p = page.plan().primary();
        List<LookRecord> primary = primaryLooks(page.looks());
        int crossing = -1;
        String label = null;
        for (int i = 0; i < primary.size(); i++) {
            Decision d = primary.get(i).decision();
            if (d == Decision.EFFICACY || d == Decision.FUTILITY) {
                crossing = i;
                label = "look " + primary.get(i).look() + ": " + d.wireName();
                break;
            }
        }
        if (primary.size() > CHART_LOOKS) {
            Thinned t = thin(primary, crossing, CHART_LOOKS);
            primary = t.looks();
            crossing = t.crossing();
        }
        List<BoundaryChart.Point> path = new ArrayList<>();
        if (p.method() == Method.MIXTURE_SPRT) {
            for (LookRecord l : primary) {
                path.add(new BoundaryChart.Point(l.informationFraction(), orNaN(l.alwaysValidPValue())));
            }
            return BoundaryChart.alwaysValid(p.alpha(), path, crossing, label);
        }
        List<BoundaryChart.Bound> used = new ArrayList<>();
        for (LookRecord l : primary) {
            path.add(new BoundaryChart.Point(l.informationFraction(), orNaN(l.z())));
        }
        if (p.method() == Method.SPRT) {
            for (LookRecord l : primary) {
                used.add(waldBound(p, l));
            }
            return BoundaryChart.zPath(1, used, List.of(), path, crossing, label);
        }
        double last = 0;
        boolean ended = false;
        for (LookRecord l : primary) {
            used.add(new BoundaryChart.Bound(l.informationFraction(), orNaN(l.efficacyZ()), orNaN(l.futilityZ())));
            last = l.informationFraction();
            ended |= l.decision().endsPrimary();
        }
        List<BoundaryChart.Bound> ahead = new ArrayList<>();
        if (!ended) {
            for (ExperimentView.BoundaryPoint bp : page.detail().plannedBoundaries()) {
                if (bp.informationFraction() > last) {
                    ahead.add(new BoundaryChart.Bound(bp.informationFraction(), bp.efficacyZ(),
                            bp.futilityZ() == null ? Double.NaN : bp.futilityZ()));
                }
            }
        }
        return BoundaryChart.zPath(sides(p), used, ahead, path, crossing, label);
    }

    /**
     * Wald's thresholds on the z scale at one look. With {@code r = delta1 / se} the log likelihood ratio
     * of the normal difference is {@code (delta1 d - delta1^2/2) / se^2 = r z - r^2/2} (Wald 1947), so
     * {@code log A} and {@code log B} are crossed at {@code z = log A / r + r / 2} and {@code log B / r + r / 2}.
     * The parameters are resolved as {@link dev.stopline.monitor.ExperimentMonitor} resolves them.
     */
    static BoundaryChart.Bound waldBound(Primary p, LookRecord l) {
        Double se = l.standardError();
        double delta1 = ExperimentMonitor.waldDelta1(p);
        double beta = ExperimentMonitor.waldBeta(p);
        if (se == null || !(se > 0) || !Double.isFinite(delta1) || delta1 == 0) {
            return new BoundaryChart.Bound(l.informationFraction(), Double.NaN, Double.NaN);
        }
        WaldSprt w = WaldSprt.of(p.alpha(), beta);
        double r = delta1 / se;
        return new BoundaryChart.Bound(l.informationFraction(), w.logUpper() / r + r / 2, w.logLower() / r + r / 2);
    }

    // ------------------------------------------------------------------ alpha ledger

    private static void ledger(StringBuilder b, ExperimentPage page) {
        Primary p = page.plan().primary();
        List<LookRecord> primary = primaryLooks(page.looks());
        if (p.method() != Method.GROUP_SEQUENTIAL) {
            sprtTable(b, p, primary);
            return;
        }
        int sides = sides(p);
        b.append("<section id=\"ledger\"><h2>Alpha ledger</h2><p class=\"note\">Alpha spent by each formal look "
                + "(Lan-DeMets spending at the fraction actually reached). Rows marked <em>planned</em> are the "
                + "boundaries of looks not taken yet; they are recomputed at the fraction reached.</p>"
                + "<div class=\"scroll\"><table class=\"ledger\"><thead><tr><th class=\"num\">Look</th>"
                + "<th class=\"num\">Information fraction</th><th class=\"num\">z</th><th class=\"num\">"
                + "Efficacy boundary</th><th class=\"num\">Futility boundary</th><th class=\"num\">Cumulative alpha"
                + "</th><th class=\"num\">Difference (repeated CI)</th><th>Decision</th></tr></thead><tbody>");
        double last = 0;
        int lastLook = 0;
        boolean ended = false;
        for (LookRecord l : primary) {
            b.append("<tr data-look=\"").append(l.look()).append("\">");
            cell(b, "look", String.valueOf(l.look()), Double.valueOf(l.look()));
            cell(b, "fraction", fixed(l.informationFraction(), 3), l.informationFraction());
            cell(b, "z", fixed(l.z(), 2), l.z());
            cell(b, "efficacy", (sides == 2 ? "\u00b1" : "") + fixed(l.efficacyZ(), 3), l.efficacyZ());
            cell(b, "futility", futility(l.futilityZ(), sides), l.futilityZ());
            cell(b, "alpha", prob(l.cumulativeAlphaSpent()), l.cumulativeAlphaSpent());
            b.append("<td class=\"num\">").append(signed(l.estimate())).append(interval(l.intervalLower(),
                    l.intervalUpper())).append("</td><td>").append(decision(l.decision().wireName())).append("</td></tr>");
            last = l.informationFraction();
            lastLook = l.look() == null ? lastLook : l.look();
            ended |= l.decision().endsPrimary();
        }
        if (!ended) {
            int k = lastLook;
            for (ExperimentView.BoundaryPoint bp : page.detail().plannedBoundaries()) {
                if (bp.informationFraction() <= last) {
                    continue;
                }
                k++;
                b.append("<tr class=\"planned\" data-planned=\"").append(k).append("\"><td class=\"num\">").append(k)
                        .append("</td><td class=\"num\">").append(fixed(bp.informationFraction(), 3))
                        .append("</td><td class=\"num muted\">\u2013</td><td class=\"num\">")
                        .append(sides == 2 ? "\u00b1" : "").append(fixed(bp.efficacyZ(), 3))
                        .append("</td><td class=\"num\">").append(futility(bp.futilityZ(), sides))
                        .append("</td><td class=\"num\">").append(prob(bp.cumulativeAlphaSpent()))
                        .append("</td><td></td><td><span class=\"muted\">\u25cc planned</span></td></tr>");
            }
        }
        if (primary.isEmpty() && page.detail().plannedBoundaries().isEmpty()) {
            b.append("<tr><td colspan=\"8\" class=\"muted\">no look yet</td></tr>");
        }
        b.append("</tbody></table></div></section>");
    }

    private static String futility(Double f, int sides) {
        if (f == null || f.isNaN()) {
            return "<span class=\"muted\">none</span>";
        }
        return (sides == 2 ? "|z| \u2264 " : "") + fixed(f, 3);
    }

    private static void cell(StringBuilder b, String field, String text, Double value) {
        b.append("<td class=\"num\" data-field=\"").append(field).append("\" data-value=\"").append(raw(value))
                .append("\">").append(text).append("</td>");
    }

    private static void sprtTable(StringBuilder b, Primary p, List<LookRecord> primary) {
        boolean mixture = p.method() == Method.MIXTURE_SPRT;
        b.append("<section id=\"ledger\"><h2>Evidence by look</h2><p class=\"note\">").append(mixture
                ? "The mixture SPRT looks at every snapshot; its always-valid p-value and confidence sequence "
                + "stay valid however often they are read, so there is no alpha ledger."
                : "Wald's SPRT looks at every snapshot and stops when the likelihood ratio leaves its thresholds.")
                .append(primary.size() > SPRT_ROWS ? " Showing the last " + SPRT_ROWS + " of " + primary.size()
                        + " looks." : "")
                .append("</p><div class=\"scroll\"><table class=\"ledger\"><thead><tr><th class=\"num\">Look</th>"
                        + "<th class=\"num\">Information fraction</th><th class=\"num\">z</th>");
        b.append(mixture ? "<th class=\"num\">Always-valid p</th><th class=\"num\">Confidence sequence</th>"
                : "<th class=\"num\">Upper threshold (z)</th><th class=\"num\">Lower threshold (z)</th>");
        b.append("<th>Decision</th></tr></thead><tbody>");
        for (LookRecord l : primary.subList(Math.max(0, primary.size() - SPRT_ROWS), primary.size())) {
            b.append("<tr data-look=\"").append(l.look()).append("\">");
            cell(b, "look", String.valueOf(l.look()), l.look() == null ? null : Double.valueOf(l.look()));
            cell(b, "fraction", fixed(l.informationFraction(), 3), l.informationFraction());
            cell(b, "z", fixed(l.z(), 2), l.z());
            if (mixture) {
                cell(b, "p", prob(l.alwaysValidPValue()), l.alwaysValidPValue());
                b.append("<td class=\"num\">(").append(signed(l.intervalLower())).append(", ")
                        .append(signed(l.intervalUpper())).append(")</td>");
            } else {
                BoundaryChart.Bound w = waldBound(p, l);
                cell(b, "upper", fixed(w.efficacyZ(), 3), w.efficacyZ());
                cell(b, "lower", fixed(w.futilityZ(), 3), w.futilityZ());
            }
            b.append("<td>").append(decision(l.decision().wireName())).append("</td></tr>");
        }
        if (primary.isEmpty()) {
            b.append("<tr><td colspan=\"6\" class=\"muted\">no look yet</td></tr>");
        }
        b.append("</tbody></table></div></section>");
    }

    // ------------------------------------------------------------------ guardrails and sample ratio

    private static void guardrails(StringBuilder b, ExperimentPage page) {
        List<Guardrail> gs = page.plan().guardrails();
        b.append("<section id=\"guardrails\"><h2>Guardrails</h2>");
        if (gs.isEmpty()) {
            b.append("<p class=\"muted\">This plan has no guardrails.</p></section>");
            return;
        }
        b.append("<p class=\"note\">Harm is shown when the always-valid lower bound of the harm exceeds the margin "
                + "(one-sided mixture SPRT, checked at every snapshot).</p><div class=\"scroll\"><table><thead><tr>"
                + "<th>Metric</th><th>Harm is</th><th class=\"num\">Margin</th><th class=\"num\">Difference</th>"
                + "<th class=\"num\">Harm lower bound</th><th class=\"num\">Always-valid p</th>"
                + "<th class=\"num\">Alpha</th><th>State</th></tr></thead><tbody>");
        for (Guardrail g : gs) {
            LookRecord l = page.detail().latest().get(g.metric());
            boolean relative = Boolean.TRUE.equals(g.relative());
            b.append("<tr data-guardrail=\"").append(esc(g.metric())).append("\"><td>").append(esc(g.metric()))
                    .append("</td><td>").append(g.harmful() == null ? "" : esc(g.harmful().key()))
                    .append("</td>");
            if (l == null || !LookRecord.GUARDRAIL.equals(l.role())) {
                b.append("<td class=\"num\">").append(BoundaryChart.trim(g.margin()))
                        .append(relative ? " of control" : "").append("</td><td colspan=\"3\" class=\"muted\">"
                                + "not evaluated yet</td><td class=\"num\">").append(BoundaryChart.trim(g.alpha()))
                        .append("</td><td><span class=\"muted\">\u25cb waiting</span></td></tr>");
                continue;
            }
            b.append("<td class=\"num\">").append(fixed(l.margin(), 4));
            if (relative) {
                b.append(" <span class=\"muted\">(").append(BoundaryChart.trim(g.margin() * 100))
                        .append("% of control)</span>");
            }
            b.append("</td>");
            cell(b, "difference", signed(l.estimate()), l.estimate());
            cell(b, "harm-lower", fixed(l.intervalLower(), 4), l.intervalLower());
            cell(b, "p", prob(l.alwaysValidPValue()), l.alwaysValidPValue());
            b.append("<td class=\"num\">").append(BoundaryChart.trim(g.alpha())).append("</td><td>")
                    .append(l.decision() == Decision.GUARDRAIL_HARM ? decision(Decision.GUARDRAIL_HARM.wireName())
                            : "<span class=\"st st-ok\">\u2713 no harm shown</span>").append("</td></tr>");
        }
        b.append("</tbody></table></div></section>");
    }

    private static void sampleRatio(StringBuilder b, ExperimentPage page) {
        SampleRatioRecord r = page.sampleRatio();
        b.append("<section id=\"sample-ratio\"><h2>Sample ratio</h2>");
        if (r == null) {
            b.append("<p class=\"muted\">No snapshot yet.</p></section>");
            return;
        }
        long total = r.units().values().stream().mapToLong(Long::longValue).sum();
        b.append("<p class=\"note\">Chi-square test of the units per arm against the planned allocation, at the "
                + "last snapshot (").append(r.sequence()).append(").</p><div class=\"scroll\"><table><thead><tr>"
                + "<th>Arm</th><th class=\"num\">Units</th><th class=\"num\">Observed share</th>"
                + "<th class=\"num\">Planned share</th></tr></thead><tbody>");
        r.units().forEach((arm, n) -> {
            Double planned = page.plan().allocation().get(arm);
            b.append("<tr data-arm=\"").append(esc(arm)).append("\"><td>").append(esc(arm))
                    .append(arm.equals(page.plan().control()) ? " <span class=\"muted\">(control)</span>" : "")
                    .append("</td><td class=\"num\" data-field=\"units\" data-value=\"").append(n).append("\">")
                    .append(String.format(Locale.ROOT, "%,d", n)).append("</td><td class=\"num\">")
                    .append(total == 0 ? "\u2013" : fixed(100.0 * n / total, 2) + "%").append("</td><td class=\"num\">")
                    .append(planned == null ? "\u2013" : fixed(100 * planned, 2) + "%").append("</td></tr>");
        });
        b.append("</tbody></table></div><p class=\"verdict\">")
                .append(r.mismatch() ? "<span class=\"st st-bad\">\u26a0 mismatch</span>"
                        : "<span class=\"st st-ok\">\u2713 consistent with the allocation</span>")
                .append(" chi-square ").append(fixed(r.chiSquare(), 2)).append(", p = <span data-field=\"srm-p\" "
                        + "data-value=\"").append(raw(r.pValue())).append("\">").append(prob(r.pValue()))
                .append("</span> (threshold ").append(BoundaryChart.trim(r.threshold())).append(")</p></section>");
    }

    // ------------------------------------------------------------------ alerts, plan, audit

    private static void alerts(StringBuilder b, ExperimentPage page) {
        b.append("<section id=\"alerts\"><h2>Alerts</h2>");
        if (page.alerts().isEmpty()) {
            b.append("<p class=\"muted\">No alert has been raised.</p></section>");
            return;
        }
        b.append("<div class=\"scroll\"><table><thead><tr><th>Raised</th><th>Kind</th><th>Metric</th>"
                + "<th class=\"num\">Look</th><th>What happened</th><th>Acknowledged</th><th>Delivery</th></tr>"
                + "</thead><tbody>");
        for (AlertItem a : page.alerts()) {
            var alert = a.stored().alert();
            b.append("<tr data-alert=\"").append(esc(alert.id())).append("\"><td class=\"time\">")
                    .append(time(a.stored().createdAt())).append("</td><td class=\"nowrap\">")
                    .append(alertKind(alert.kind().wireName()))
                    .append("</td><td>").append(alert.metric() == null ? "<span class=\"muted\">\u2013</span>"
                            : esc(alert.metric())).append("</td><td class=\"num\">")
                    .append(alert.lookNumber() == null ? "\u2013" : alert.lookNumber()).append("</td><td>")
                    .append(esc(alert.summary())).append("</td><td>");
            if (a.stored().acknowledgedAt() == null) {
                b.append("<span class=\"st st-open\">\u25cf open</span>");
            } else {
                b.append("\u2713 ").append(esc(a.stored().acknowledgedBy())).append("<div class=\"sub\">")
                        .append(time(a.stored().acknowledgedAt())).append("</div>");
            }
            b.append("</td><td><ul class=\"deliveries\">");
            for (Store.DeliveryStatus d : a.deliveries()) {
                b.append("<li>").append(esc(d.channel())).append(": ").append(delivery(d.status())).append(" <span "
                        + "class=\"muted\">(").append(d.attempts()).append(d.attempts() == 1 ? " attempt" : " attempts")
                        .append(")</span>");
                if (d.lastError() != null && !"delivered".equals(d.status())) {
                    b.append("<div class=\"sub err\">").append(esc(d.lastError())).append("</div>");
                }
                b.append("</li>");
            }
            if (a.deliveries().isEmpty()) {
                b.append("<li class=\"muted\">no channel</li>");
            }
            b.append("</ul></td></tr>");
        }
        b.append("</tbody></table></div></section>");
    }

    private static String delivery(String status) {
        return switch (status == null ? "" : status) {
            case "delivered" -> "<span class=\"st st-ok\">\u2713 delivered</span>";
            case "pending" -> "<span class=\"st st-wait\">\u25cc pending</span>";
            case "abandoned" -> "<span class=\"st st-bad\">\u2716 abandoned</span>";
            default -> esc(status);
        };
    }

    private static void planSource(StringBuilder b, ExperimentPage page) {
        b.append("<section id=\"plan\"><h2>Plan as registered</h2><pre class=\"source\"><code>")
                .append(esc(page.detail().planSource())).append("</code></pre></section>");
    }

    private static void audit(StringBuilder b, ExperimentPage page) {
        b.append("<section id=\"audit\"><h2>Audit trail</h2><div class=\"scroll\"><table><thead><tr><th>At</th>"
                + "<th>Actor</th><th>Action</th><th class=\"num\">Version</th><th>Content hash</th>"
                + "<th class=\"num\">Alpha spent</th><th>Detail</th></tr></thead><tbody>");
        for (Store.AuditEntry e : page.audit()) {
            String hash = e.contentHash() == null ? "" : e.contentHash();
            b.append("<tr><td class=\"time\">").append(time(e.at())).append("</td><td>").append(esc(e.actor()))
                    .append("</td><td>").append(esc(e.action())).append("</td><td class=\"num\">").append(e.version())
                    .append("</td><td><code title=\"").append(esc(hash)).append("\">")
                    .append(esc(hash.substring(0, Math.min(12, hash.length())))).append("</code></td><td class=\"num\">")
                    .append(prob(e.alphaSpent())).append("</td><td>").append(esc(e.detail())).append("</td></tr>");
        }
        if (page.audit().isEmpty()) {
            b.append("<tr><td colspan=\"7\" class=\"muted\">no entry</td></tr>");
        }
        b.append("</tbody></table></div></section>");
    }

    // ------------------------------------------------------------------ not found

    public static String notFound(String id, Instant now) {
        StringBuilder b = new StringBuilder(4096);
        head(b, "Not found \u00b7 Stopline", now, null);
        b.append("<main><h1>No such experiment</h1><p class=\"lede\">No plan is registered for <code>")
                .append(esc(id)).append("</code>.</p><p><a href=\"/\">\u2190 All experiments</a></p></main>");
        foot(b, now, null);
        return b.toString();
    }

    // ------------------------------------------------------------------ pieces

    /** Looks of a chart after thinning, and where the first crossing is among them (-1: none). */
    record Thinned(List<LookRecord> looks, int crossing) {
    }

    /**
     * At most {@code max} of {@code looks}, evenly spread over the history, always with the first and the
     * last look and the first crossing: an SPRT looks at every snapshot, and a path of tens of thousands of
     * points is no easier to read than one of a few hundred, only slower to draw.
     */
    static Thinned thin(List<LookRecord> looks, int crossing, int max) {
        if (looks.size() <= max) {
            return new Thinned(looks, crossing);
        }
        java.util.TreeSet<Integer> keep = new java.util.TreeSet<>();
        int n = looks.size();
        for (int i = 0; i < max - 2; i++) {
            keep.add((int) Math.round((double) i * (n - 1) / (max - 3)));
        }
        keep.add(n - 1);
        if (crossing >= 0) {
            keep.add(crossing);
        }
        while (keep.size() > max) {                       // room for the crossing: drop a neighbour of it
            Integer drop = keep.lower(crossing) != null && keep.lower(crossing) > 0 ? keep.lower(crossing)
                    : keep.higher(crossing);
            keep.remove(drop);
        }
        List<LookRecord> out = new ArrayList<>(keep.size());
        int at = -1;
        for (int i : keep) {
            if (i == crossing) {
                at = out.size();
            }
            out.add(looks.get(i));
        }
        return new Thinned(out, at);
    }

    private static List<LookRecord> primaryLooks(List<LookRecord> looks) {
        return looks.stream().filter(l -> LookRecord.PRIMARY.equals(l.role()))
                .sorted(Comparator.comparingLong(LookRecord::sequence)).toList();
    }

    private static int sides(Primary p) {
        return p.sides() == null ? Primary.DEFAULT_SIDES : p.sides();
    }

    private static double orNaN(Double x) {
        return x == null ? Double.NaN : x;
    }

    private static String signed(Double x) {
        if (x == null || !Double.isFinite(x)) {
            return "\u2013";
        }
        return (x > 0 ? "+" : x < 0 ? "\u2212" : "") + String.format(Locale.ROOT, "%.4f", Math.abs(x));
    }

    /** " (lower, upper)" in muted type, or nothing when the look has no interval. */
    private static String interval(Double lower, Double upper) {
        if (lower == null && upper == null) {
            return "";
        }
        return " <span class=\"muted\">(" + signed(lower) + ", " + signed(upper) + ")</span>";
    }

    /** An information-fraction meter: a bar and the number (the number carries the meaning). */
    private static String meter(Double fraction) {
        if (fraction == null) {
            return "<span class=\"muted\">no data yet</span>";
        }
        double w = Math.max(0, Math.min(1, fraction)) * 100;
        return String.format(Locale.ROOT, "<span class=\"meter\"><span class=\"bar\"><span style=\"width:%.1f%%\">"
                + "</span></span> <span data-field=\"fraction\" data-value=\"%s\">%.1f%%</span></span>", w,
                raw(fraction), 100 * fraction);
    }

    /** Experiment status with a symbol and a word. */
    static String badge(String status) {
        String s = status == null ? "waiting" : status;
        return switch (s) {
            case "running" -> "<span class=\"st st-run\">\u25b6 running</span>";
            case "waiting" -> "<span class=\"st st-wait\">\u25cb waiting for data</span>";
            default -> decision(s);
        };
    }

    /** A decision's wire name with a symbol. */
    static String decision(String wire) {
        return switch (wire) {
            case "continue" -> "<span class=\"st st-run\">\u2192 continue</span>";
            case "efficacy" -> "<span class=\"st st-ok\">\u2714 efficacy</span>";
            case "futility" -> "<span class=\"st st-warn\">\u2716 futility</span>";
            case "final-no-difference" -> "<span class=\"st st-end\">\u25a0 final, no difference</span>";
            case "guardrail-harm" -> "<span class=\"st st-bad\">\u25b2 guardrail harm</span>";
            case "sample-ratio-mismatch" -> "<span class=\"st st-bad\">\u26a0 sample-ratio mismatch</span>";
            default -> "<span class=\"st\">" + esc(wire) + "</span>";
        };
    }

    static String alertKind(String kind) {
        return switch (kind) {
            case "efficacy" -> "\u2714 efficacy";
            case "futility" -> "\u2716 futility";
            case "guardrail" -> "\u25b2 guardrail";
            case "sample-ratio" -> "\u26a0 sample ratio";
            default -> esc(kind);
        };
    }

    private static void head(StringBuilder b, String title, Instant now, String experiment) {
        b.append("<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\"><meta name=\"viewport\" "
                + "content=\"width=device-width, initial-scale=1\"><meta http-equiv=\"refresh\" content=\"")
                .append(REFRESH_SECONDS).append("\"><title>").append(esc(title)).append("</title><style>")
                .append(CSS).append("</style></head><body><nav class=\"top\"><a class=\"brand\" href=\"/\">"
                        + "<span class=\"mark\" aria-hidden=\"true\">\u25e7</span> Stopline</a>");
        if (experiment != null) {
            b.append("<span class=\"crumb\"><a href=\"/\">experiments</a> / ").append(esc(experiment)).append("</span>");
        }
        b.append("<span class=\"clock\">").append(time(now)).append("</span></nav>");
    }

    private static void foot(StringBuilder b, Instant now, String api) {
        b.append("<footer>Rendered ").append(time(now)).append(" \u00b7 refreshes every ").append(REFRESH_SECONDS)
                .append(" s");
        if (api != null) {
            b.append(" \u00b7 JSON: <a href=\"").append(esc(api)).append("\">").append(esc(api)).append("</a>");
        }
        b.append("</footer></body></html>");
    }

    private static final String CSS = """
            :root{--ink:#1d232b;--muted:#5b6470;--paper:#f4f2ec;--card:#fff;--line:#d9d5ca;--accent:#124e66;
            --ok:#0b6e4f;--okbg:#e3f1ea;--warn:#8a4200;--warnbg:#fbecdc;--bad:#a3222b;--badbg:#fbe4e4;
            --run:#124e66;--runbg:#e2eef3;--end:#3b434d;--endbg:#e9e8e3}
            *{box-sizing:border-box}
            body{margin:0;background:var(--paper);color:var(--ink);font:15px/1.45 system-ui,-apple-system,"Segoe UI",
            Roboto,"Helvetica Neue",Arial,sans-serif}
            a{color:var(--accent)}
            nav.top{display:flex;gap:18px;align-items:baseline;padding:10px 28px;background:var(--ink);color:#f4f2ec}
            nav.top a{color:#f4f2ec;text-decoration:none}
            .brand{font-weight:700;letter-spacing:.02em}.mark{color:#8fc7b4}
            .crumb{color:#c9c5ba}.crumb a{color:#c9c5ba;text-decoration:underline}
            .clock{margin-left:auto;color:#c9c5ba;font-variant-numeric:tabular-nums;font-size:13px}
            main{max-width:1180px;margin:0 auto;padding:22px 28px 8px}
            h1{font-size:26px;margin:4px 0 2px;letter-spacing:-.01em}
            h2{font-size:17px;margin:0 0 8px;padding-bottom:6px;border-bottom:2px solid var(--ink)}
            section{background:var(--card);border:1px solid var(--line);border-radius:6px;padding:16px 18px;
            margin:0 0 18px}
            .lede{margin:2px 0 6px;font-size:16px}.sub{color:var(--muted);font-size:13px}
            .muted{color:var(--muted)}.note{color:var(--muted);font-size:13px;margin:0 0 10px}
            .exp-head{display:flex;justify-content:space-between;align-items:flex-start;gap:16px;margin-bottom:12px}
            .exp-head .state .st{font-size:16px;padding:5px 12px}
            .facts{display:grid;grid-template-columns:repeat(auto-fill,minmax(160px,1fr));gap:10px 16px;margin:0 0 18px;
            padding:12px 18px;background:var(--card);border:1px solid var(--line);border-radius:6px}
            .facts dt{font-size:12px;text-transform:uppercase;letter-spacing:.06em;color:var(--muted)}
            .facts dd{margin:0;font-variant-numeric:tabular-nums;font-size:14px;overflow-wrap:anywhere}
            .facts .meter{white-space:nowrap}
            table{border-collapse:collapse;width:100%;font-size:14px}
            th{text-align:left;font-size:12px;text-transform:uppercase;letter-spacing:.05em;color:var(--muted);
            font-weight:600;border-bottom:1px solid var(--line);padding:6px 10px 6px 0;vertical-align:bottom}
            td{padding:7px 10px 7px 0;border-bottom:1px solid #ebe8e0;vertical-align:top}
            tbody tr:last-child td{border-bottom:none}
            .num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}
            .time{white-space:nowrap;font-variant-numeric:tabular-nums;font-size:13px}
            tr.planned td{color:var(--muted);font-style:italic;background:repeating-linear-gradient(135deg,#fff 0 6px,
            #f7f5ef 6px 12px)}
            .list-card{padding:6px 18px}.list td{padding-top:12px;padding-bottom:12px}.list a.exp{font-weight:650;font-size:15px}
            .st{display:inline-block;padding:1px 8px;border-radius:3px;font-weight:600;font-size:13px;white-space:nowrap;
            border:1px solid currentColor}
            .st-run{color:var(--run);background:var(--runbg)}.st-ok{color:var(--ok);background:var(--okbg)}
            .st-warn{color:var(--warn);background:var(--warnbg)}.st-bad{color:var(--bad);background:var(--badbg)}
            .st-end{color:var(--end);background:var(--endbg)}.st-wait{color:var(--muted);background:#f1f0ec}
            .st-open{color:var(--bad);background:#fff}
            .kind{display:inline-block;margin-right:6px;font-size:13px;white-space:nowrap}td.nowrap{white-space:nowrap}.count{font-variant-numeric:tabular-nums}
            .meter{display:inline-flex;align-items:center;gap:6px;font-variant-numeric:tabular-nums}
            .bar{display:inline-block;width:90px;height:8px;border:1px solid var(--ink);border-radius:2px;
            background:#fff}.bar span{display:block;height:100%;background:var(--ink)}
            figure{margin:0}svg.chart{max-width:100%;height:auto;display:block}
            .legend{list-style:none;padding:0;margin:8px 0 0;display:flex;flex-wrap:wrap;gap:4px 22px;font-size:13px;
            color:var(--ink)}.legend svg{vertical-align:middle}.sym{font-size:14px}
            .deliveries{list-style:none;margin:0;padding:0}.err{color:var(--bad)}
            pre.source{background:#fbfaf6;border:1px solid var(--line);border-radius:4px;padding:12px;overflow:auto;
            font:13px/1.5 ui-monospace,SFMono-Regular,Menlo,Consolas,"DejaVu Sans Mono",monospace;margin:0}
            code{font-family:ui-monospace,SFMono-Regular,Menlo,Consolas,"DejaVu Sans Mono",monospace;font-size:.92em}
            .chart-wrap{display:flex;flex-wrap:wrap;gap:18px 26px;align-items:flex-start}
            .chart-wrap figure{flex:0 1 760px;min-width:0}
            .reading{flex:1 1 230px;border-left:3px solid var(--ink);padding:2px 0 2px 16px}
            .reading h3{margin:0 0 8px;font-size:14px;text-transform:uppercase;letter-spacing:.06em}
            .reading dl{margin:0;display:grid;gap:7px}.reading dt{font-size:12px;color:var(--muted)}
            .reading dd{margin:0;font-variant-numeric:tabular-nums}
            .verdict{margin:10px 0 0}.scroll{overflow-x:auto}.empty{padding:24px 0}
            footer{max-width:1180px;margin:0 auto;padding:4px 28px 28px;color:var(--muted);font-size:13px}
            """;
}
