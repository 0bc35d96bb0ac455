package dev.stopline.simulate;

import dev.stopline.plan.Guardrail;
import dev.stopline.plan.Primary;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;

/**
 * One self-contained HTML page for a {@link RehearsalResult}: inline CSS and inline SVG charts, no
 * scripts, fonts or links to anything outside the file. Charts: the boundaries over information
 * fraction with a few simulated paths; the power curve; where the analysis stops; the look calendar.
 * Colour is never the only carrier of meaning: efficacy bounds are solid, futility bounds dashed,
 * exact figures a line and Monte Carlo figures points with 95% error bars, and every series is
 * labelled in the chart.
 */
public final class HtmlReport {
    private static final String INK = "#1d2733";
    private static final String MUTED = "#6b7785";
    private static final String EFFICACY = "#1f6f5c";
    private static final String FUTILITY = "#a8552b";
    private static final String PATH = "#7d8fa3";
    private static final String GRID = "#e3e7ec";
    /** Points of the exact power curve. */
    static final int CURVE_POINTS = 61;

    private HtmlReport() {
    }

    public static String render(RehearsalResult r, List<String> notes) {
        Primary p = r.plan().primary();
        StringBuilder h = new StringBuilder(32_768);
        h.append("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n")
                .append("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n")
                .append("<title>Rehearsal of ").append(esc(r.plan().experiment())).append("</title>\n<style>\n")
                .append(CSS).append("</style>\n</head>\n<body>\n<main>\n");
        h.append("<header><p class=\"kicker\">Stopline rehearsal</p><h1>").append(esc(r.plan().experiment()))
                .append("</h1><p class=\"lede\">Primary <b>").append(esc(p.metric())).append("</b> (")
                .append(esc(p.type().key())).append(", ").append(esc(p.method().key())).append(", alpha ")
                .append(p.alpha()).append(", ").append(p.sides()).append("-sided). Seed ").append(r.seed());
        if (r.trials() > 0) {
            h.append(f(", %,d z-scale trials", r.trials()));
        }
        if (r.dataTrials() > 0) {
            h.append(f(", %,d data-level trials", r.dataTrials()));
        }
        h.append(" per effect.</p></header>\n");
        summary(h, r);
        if (r.zPlan() != null) {
            section(h, "Boundaries and simulated paths", "The Z statistic at each planned look. Stop for efficacy "
                    + "on or beyond a solid line, for futility inside the dashed lines. Grey paths are simulated at effect "
                    + fmt(r.effects().get(r.effects().size() - 1).effect()) + "; a filled dot marks a stop for efficacy, "
                    + "an open dot any other end.", boundaryChart(r));
        }
        section(h, "Power curve", r.zPlan() != null
                ? "Probability of stopping for efficacy against the true effect. Line: exact (numerical integration). "
                        + "Points: Monte Carlo with 95% error bars."
                : "Probability of stopping for efficacy against the true effect, Monte Carlo with 95% error bars.",
                powerChart(r));
        section(h, "Where the analysis stops", "Probability of ending at each look (for SPRT plans, at each "
                + "snapshot), one panel per effect; the number above each bar is the probability.", stopCharts(r));
        if (r.calendar() != null) {
            section(h, "Look calendar", "Date on which each look's data are complete, if the experiment gets that "
                    + "far: the bar spans the 10% to 90% range, the diamond is the expected date.", calendarChart(r));
        }
        if (!notes.isEmpty()) {
            h.append("<section><h2>Notes</h2><ul class=\"notes\">");
            for (String n : notes) {
                h.append("<li>").append(esc(n)).append("</li>");
            }
            h.append("</ul></section>\n");
        }
        h.append("</main>\n</body>\n</html>\n");
        return h.toString();
    }

    private static void section(StringBuilder h, String title, String caption, String svg) {
        h.append("<section><h2>").append(esc(title)).append("</h2><p class=\"caption\">").append(esc(caption))
                .append("</p>\n").append(svg).append("\n</section>\n");
    }

    // ---------------------------------------------------------------------------------- summary table

    private static void summary(StringBuilder h, RehearsalResult r) {
        h.append("<section><h2>Operating characteristics</h2><table><thead><tr><th>effect</th><th>method</th>")
                .append("<th>P(efficacy)</th><th>P(futility)</th><th>expected units/arm</th>")
                .append("<th>units/arm 10% / 50% / 90%</th></tr></thead><tbody>\n");
        for (RehearsalResult.EffectResult e : r.effects()) {
            if (e.exact() != null) {
                row(h, e.effect(), "exact", e.exact());
            }
            if (e.monteCarlo() != null) {
                row(h, e.effect(), "Monte Carlo, z-scale", e.monteCarlo());
            }
            if (e.dataLevel() != null) {
                row(h, e.effect(), "Monte Carlo, data-level", e.dataLevel().primary());
            }
        }
        h.append("</tbody></table>\n");
        List<Guardrail> g = r.plan().guardrails();
        if (r.dataTrials() > 0) {
            h.append("<table><thead><tr><th>effect</th><th>false alarm (Monte Carlo, data-level)</th><th>rate</th>")
                    .append("<th>level</th></tr></thead><tbody>\n");
            for (RehearsalResult.EffectResult e : r.effects()) {
                DataLevelEngine.Result d = e.dataLevel();
                for (int i = 0; i < g.size(); i++) {
                    h.append("<tr><td>").append(fmt(e.effect())).append("</td><td>guardrail ")
                            .append(esc(g.get(i).metric())).append("</td><td>")
                            .append(f("%.4f ± %.4f", d.guardrailAlarm()[i], d.guardrailAlarmSe()[i]))
                            .append("</td><td>").append(g.get(i).alpha()).append("</td></tr>\n");
                }
                h.append("<tr><td>").append(fmt(e.effect())).append("</td><td>sample ratio</td><td>")
                        .append(f("%.4f ± %.4f", d.sampleRatioAlarm(), d.sampleRatioAlarmSe())).append("</td><td>")
                        .append(r.plan().sampleRatio().alpha()).append(" per snapshot</td></tr>\n");
            }
            h.append("</tbody></table>\n");
        }
        h.append("</section>\n");
    }

    private static void row(StringBuilder h, double effect, String method, Characteristics c) {
        boolean mc = c.trials() > 0;
        long[] q = c.unitsQuantiles();
        h.append("<tr><td>").append(fmt(effect)).append("</td><td>").append(method).append("</td><td>")
                .append(mc ? f("%.4f ± %.4f", c.efficacy(), c.efficacySe()) : f("%.5f", c.efficacy()))
                .append("</td><td>").append(mc ? f("%.4f ± %.4f", c.futility(), c.futilitySe()) : f("%.5f", c.futility()))
                .append("</td><td>").append(mc ? f("%,.0f ± %,.0f", c.expectedUnitsPerArm(), c.expectedUnitsPerArmSe())
                        : f("%,.0f", c.expectedUnitsPerArm()))
                .append("</td><td>").append(f("%,d / %,d / %,d", q[0], q[1], q[2])).append("</td></tr>\n");
    }

    // ---------------------------------------------------------------------------------- charts

    /** A plotting frame: maps data to pixels inside margins. */
    private record Frame(double w, double h, double left, double right, double top, double bottom, double x0,
                         double x1, double y0, double y1) {
        double x(double v) {
            return left + (v - x0) / (x1 - x0) * (w - left - right);
        }

        double y(double v) {
            return h - bottom - (v - y0) / (y1 - y0) * (h - top - bottom);
        }

        String open(String label) {
            return f("<svg viewBox=\"0 0 %.0f %.0f\" role=\"img\" aria-label=\"%s\">",
                    w, h, esc(label));
        }

        void axes(StringBuilder s, double[] xt, double[] yt, String xLabel, String yLabel, boolean percentY) {
            for (double v : yt) {
                s.append(f("<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"%s\"/>", left, y(v), w - right, y(v), GRID));
                s.append(f("<text x=\"%.1f\" y=\"%.1f\" class=\"tick\" text-anchor=\"end\">%s</text>", left - 6, y(v) + 4,
                        percentY ? f("%.0f%%", 100 * v) : trim(v)));
            }
            for (double v : xt) {
                s.append(f("<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"%s\"/>", x(v), h - bottom, x(v), h - bottom + 4, MUTED));
                s.append(f("<text x=\"%.1f\" y=\"%.1f\" class=\"tick\" text-anchor=\"middle\">%s</text>", x(v), h - bottom + 17, trim(v)));
            }
            s.append(f("<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"%s\"/>", left, h - bottom, w - right, h - bottom, MUTED));
            s.append(f("<text x=\"%.1f\" y=\"%.1f\" class=\"axis\" text-anchor=\"middle\">%s</text>", (left + w - right) / 2, h - 6, esc(xLabel)));
            s.append(f("<text x=\"14\" y=\"%.1f\" class=\"axis\" text-anchor=\"middle\" transform=\"rotate(-90 14 %.1f)\">%s</text>",
                    (top + h - bottom) / 2, (top + h - bottom) / 2, esc(yLabel)));
        }
    }

    static String boundaryChart(RehearsalResult r) {
        ZScalePlan z = r.zPlan();
        double[] t = z.timing();
        double[] b = z.efficacy();
        double[] a = z.futility();
        boolean two = z.sides() == 2;
        double top = 0;
        for (double v : b) {
            if (Double.isFinite(v)) {
                top = Math.max(top, v);
            }
        }
        double[][] paths = r.samplePaths();
        for (double[] p : paths) {
            for (double v : p) {
                top = Math.max(top, Math.abs(v));
            }
        }
        double yMax = Math.ceil(top + 0.5);
        double yMin = two ? -yMax : Math.floor(Math.min(-1, minFinite(a) - 0.5));
        Frame fr = new Frame(720, 360, 52, 110, 16, 40, 0, 1, yMin, yMax);
        StringBuilder s = new StringBuilder(fr.open("Boundaries over information fraction"));
        fr.axes(s, new double[] {0, 0.2, 0.4, 0.6, 0.8, 1}, ticks(yMin, yMax), "information fraction", "Z statistic", false);
        s.append(f("<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"%s\" stroke-width=\"1\"/>",
                fr.x(0), fr.y(0), fr.x(1), fr.y(0), MUTED));
        for (double[] p : paths) {
            StringBuilder pts = new StringBuilder(f("%.1f,%.1f", fr.x(0), fr.y(0)));
            for (int k = 0; k < p.length; k++) {
                pts.append(f(" %.1f,%.1f", fr.x(t[k]), fr.y(p[k])));
            }
            s.append(f("<polyline points=\"%s\" fill=\"none\" stroke=\"%s\" stroke-width=\"1.2\" opacity=\"0.85\"/>", pts, PATH));
            int k = p.length - 1;
            boolean eff = (two ? Math.abs(p[k]) : p[k]) >= b[k];
            s.append(f("<circle cx=\"%.1f\" cy=\"%.1f\" r=\"3.5\" fill=\"%s\" stroke=\"%s\" stroke-width=\"1.5\"/>",
                    fr.x(t[k]), fr.y(p[k]), eff ? INK : "white", INK));
        }
        bound(s, fr, t, b, 1, EFFICACY, false);
        label(s, fr, t, b, 1, EFFICACY, "efficacy");
        if (two) {
            bound(s, fr, t, b, -1, EFFICACY, false);
            label(s, fr, t, b, -1, EFFICACY, "efficacy");
        }
        if (z.hasFutility()) {
            bound(s, fr, t, a, 1, FUTILITY, true);
            label(s, fr, t, a, 1, FUTILITY, "futility");
            if (two) {
                bound(s, fr, t, a, -1, FUTILITY, true);
            }
        }
        return s.append("</svg>").toString();
    }

    private static void bound(StringBuilder s, Frame fr, double[] t, double[] v, int sign, String colour, boolean dashed) {
        StringBuilder pts = new StringBuilder();
        for (int k = 0; k < t.length; k++) {
            if (Double.isFinite(v[k])) {
                pts.append(f("%.1f,%.1f ", fr.x(t[k]), fr.y(sign * v[k])));
            }
        }
        s.append(f("<polyline points=\"%s\" fill=\"none\" stroke=\"%s\" stroke-width=\"2.2\"%s/>", pts.toString().trim(),
                colour, dashed ? " stroke-dasharray=\"7 5\"" : ""));
        for (int k = 0; k < t.length; k++) {
            if (Double.isFinite(v[k])) {
                s.append(f("<rect x=\"%.1f\" y=\"%.1f\" width=\"6\" height=\"6\" fill=\"%s\"/>", fr.x(t[k]) - 3,
                        fr.y(sign * v[k]) - 3, colour));
            }
        }
    }

    private static void label(StringBuilder s, Frame fr, double[] t, double[] v, int sign, String colour, String text) {
        int k = t.length - 1;
        if (Double.isFinite(v[k])) {
            s.append(f("<text x=\"%.1f\" y=\"%.1f\" class=\"series\" fill=\"%s\">%s</text>", fr.x(t[k]) + 10,
                    fr.y(sign * v[k]) + (text.equals("futility") ? 16 : 4), colour, text));
        }
    }

    static String powerChart(RehearsalResult r) {
        List<RehearsalResult.EffectResult> es = r.effects();
        double lo = 0;
        double hi = 0;
        for (RehearsalResult.EffectResult e : es) {
            lo = Math.min(lo, e.effect());
            hi = Math.max(hi, e.effect());
        }
        if (hi == lo) {
            hi = lo + 1;
        }
        double pad = 0.1 * (hi - lo);
        double x0 = lo < 0 ? lo - pad : 0;
        double x1 = hi + pad;
        Frame fr = new Frame(720, 320, 52, 24, 16, 40, x0, x1, 0, 1);
        StringBuilder s = new StringBuilder(fr.open("Power curve"));
        fr.axes(s, ticks(x0, x1), new double[] {0, 0.25, 0.5, 0.75, 1}, "true effect (absolute, "
                + r.plan().primary().metric() + ")", "P(stop for efficacy)", true);
        if (r.zPlan() != null) {
            StringBuilder pts = new StringBuilder();
            for (int i = 0; i < CURVE_POINTS; i++) {
                double e = x0 + (x1 - x0) * i / (CURVE_POINTS - 1);
                double p;
                try {
                    p = ExactEngine.run(r.zPlan(), r.zPlan().drift(e)).efficacy();
                } catch (RuntimeException outside) {
                    continue; // a proportion's rate outside (0, 1)
                }
                pts.append(f("%.1f,%.1f ", fr.x(e), fr.y(p)));
            }
            s.append(f("<polyline points=\"%s\" fill=\"none\" stroke=\"%s\" stroke-width=\"2.2\"/>", pts.toString().trim(), EFFICACY));
            s.append(f("<line x1=\"%.1f\" y1=\"26\" x2=\"%.1f\" y2=\"26\" stroke=\"%s\" stroke-width=\"2.2\"/>", fr.left() + 12,
                    fr.left() + 36, EFFICACY));
            s.append(f("<text x=\"%.1f\" y=\"30\" class=\"series\" fill=\"%s\">exact</text>", fr.left() + 42, EFFICACY));
        }
        for (RehearsalResult.EffectResult e : es) {
            Characteristics c = e.monteCarlo() != null ? e.monteCarlo() : e.dataLevel() != null ? e.dataLevel().primary() : null;
            if (c == null) {
                continue;
            }
            double x = fr.x(e.effect());
            double half = 1.96 * c.efficacySe();
            s.append(f("<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"%s\" stroke-width=\"1.5\"/>", x,
                    fr.y(Math.max(0, c.efficacy() - half)), x, fr.y(Math.min(1, c.efficacy() + half)), INK));
            s.append(f("<circle cx=\"%.1f\" cy=\"%.1f\" r=\"4\" fill=\"white\" stroke=\"%s\" stroke-width=\"1.8\"/>", x,
                    fr.y(c.efficacy()), INK));
            s.append(f("<text x=\"%.1f\" y=\"%.1f\" class=\"tick\" text-anchor=\"start\">%s</text>", x + 7,
                    fr.y(c.efficacy()) - 6, f("%.3f", c.efficacy())));
        }
        s.append(f("<circle cx=\"%.1f\" cy=\"46\" r=\"4\" fill=\"white\" stroke=\"%s\" stroke-width=\"1.8\"/>", fr.left() + 24, INK));
        s.append(f("<text x=\"%.1f\" y=\"50\" class=\"series\" fill=\"%s\">Monte Carlo, 95%% error bar</text>", fr.left() + 42, INK));
        return s.append("</svg>").toString();
    }

    static String stopCharts(RehearsalResult r) {
        StringBuilder s = new StringBuilder("<div class=\"panels\">");
        for (RehearsalResult.EffectResult e : r.effects()) {
            Characteristics c = e.exact() != null ? e.exact() : e.headline();
            double[] p = c.stopLook();
            int n = Math.min(p.length, 40);
            Frame fr = new Frame(340, 220, 54, 10, 22, 36, 0.5, n + 0.5, 0, 1);
            s.append(fr.open("Stopping look at effect " + fmt(e.effect())));
            fr.axes(s, n <= 10 ? range(1, n) : new double[] {1, Math.round(n / 2.0), n}, new double[] {0, 0.5, 1},
                    r.zPlan() != null ? "look" : "snapshot", "probability", true);
            double bw = Math.max(2, (fr.x(1) - fr.x(0)) * 0.7);
            for (int k = 0; k < n; k++) {
                double x = fr.x(k + 1);
                s.append(f("<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" fill=\"%s\"/>", x - bw / 2,
                        fr.y(p[k]), bw, fr.y(0) - fr.y(p[k]), PATH));
                if (n <= 10) {
                    s.append(f("<text x=\"%.1f\" y=\"%.1f\" class=\"tick\" text-anchor=\"middle\">%.2f</text>", x,
                            fr.y(p[k]) - 4, p[k]));
                }
            }
            s.append(f("<text x=\"%.1f\" y=\"14\" class=\"series\" fill=\"%s\">effect %s (%s)</text></svg>", 54.0, INK,
                    esc(fmt(e.effect())), c.method()));
        }
        return s.append("</div>").toString();
    }

    static String calendarChart(RehearsalResult r) {
        LookCalendar cal = r.calendar();
        List<LookCalendar.Entry> en = new ArrayList<>(cal.entries());
        long first = cal.start().toEpochDay();
        long last = first + 1;
        for (LookCalendar.Entry e : en) {
            last = Math.max(last, e.late().toEpochDay() + 1);
        }
        double rowH = 30;
        Frame fr = new Frame(720, 60 + rowH * en.size(), 150, 96, 16, 40, 0, last - first, 0, en.size());
        StringBuilder s = new StringBuilder(fr.open("Look calendar"));
        fr.axes(s, ticks(0, last - first), new double[0], "days from " + cal.start(), "", false);
        for (int i = 0; i < en.size(); i++) {
            LookCalendar.Entry e = en.get(i);
            double y = fr.y(en.size() - i - 0.5);
            double xa = fr.x(e.early().toEpochDay() - first);
            double xb = fr.x(e.late().toEpochDay() - first + 1);
            double xm = fr.x(e.expected().toEpochDay() - first + 0.5);
            s.append(f("<text x=\"%.1f\" y=\"%.1f\" class=\"tick\" text-anchor=\"end\">%s (%,d/arm)</text>", fr.left() - 8,
                    y + 4, esc(e.label()), e.unitsPerArm()));
            s.append(f("<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"12\" fill=\"%s\" opacity=\"0.55\"/>", xa, y - 6,
                    Math.max(2, xb - xa), PATH));
            s.append(f("<path d=\"M %.1f %.1f l 6 6 l -6 6 l -6 -6 z\" fill=\"%s\"/>", xm, y - 6, INK));
            s.append(f("<text x=\"%.1f\" y=\"%.1f\" class=\"tick\" text-anchor=\"start\">%s</text>", xb + 6, y + 4,
                    e.expected()));
        }
        return s.append("</svg>").toString();
    }

    // ---------------------------------------------------------------------------------- helpers

    private static double minFinite(double[] v) {
        double m = 0;
        for (double x : v) {
            if (Double.isFinite(x)) {
                m = Math.min(m, x);
            }
        }
        return m;
    }

    private static double[] range(int from, int to) {
        double[] r = new double[to - from + 1];
        for (int i = 0; i < r.length; i++) {
            r[i] = from + i;
        }
        return r;
    }

    /** About five round ticks over [lo, hi]. */
    static double[] ticks(double lo, double hi) {
        double span = hi - lo;
        double step = Math.pow(10, Math.floor(Math.log10(span / 5)));
        for (double m : new double[] {1, 2, 5, 10}) {
            if (span / (step * m) <= 6) {
                step *= m;
                break;
            }
        }
        List<Double> t = new ArrayList<>();
        for (double v = Math.ceil(lo / step) * step; v <= hi + 1e-9 * span; v += step) {
            t.add(Math.abs(v) < 1e-12 * span ? 0 : v);
        }
        return t.stream().mapToDouble(Double::doubleValue).toArray();
    }

    private static String trim(double v) {
        String s = f("%.4f", v);
        return s.contains(".") ? s.replaceAll("0+$", "").replaceAll("\\.$", "") : s;
    }

    private static String fmt(double x) {
        return x == Math.rint(x) && Math.abs(x) < 1e15 ? Long.toString((long) x) : Double.toString(x);
    }

    static String esc(String s) {
        return s.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace("\"", "&quot;");
    }

    private static String f(String format, Object... args) {
        return String.format(Locale.ROOT, format, args);
    }

    private static final String CSS = String.join("\n",
            ":root { color-scheme: light; }",
            "body { margin: 0; background: #f6f7f9; color: " + INK + "; font: 15px/1.5 system-ui, -apple-system, "
                    + "'Segoe UI', Roboto, 'Helvetica Neue', Arial, sans-serif; }",
            "main { max-width: 960px; margin: 0 auto; padding: 32px 24px 64px; }",
            "header { border-bottom: 2px solid " + INK + "; margin-bottom: 24px; }",
            ".kicker { text-transform: uppercase; letter-spacing: .12em; font-size: 12px; color: " + MUTED + "; margin: 0; }",
            "h1 { font-size: 28px; margin: 4px 0 8px; }",
            "h2 { font-size: 18px; margin: 0 0 4px; }",
            ".lede { color: " + MUTED + "; margin: 0 0 16px; }",
            "section { background: white; border: 1px solid " + GRID + "; border-radius: 6px; padding: 18px 20px; margin: 0 0 20px; }",
            ".caption { color: " + MUTED + "; margin: 0 0 12px; font-size: 14px; }",
            "table { border-collapse: collapse; width: 100%; margin: 8px 0 12px; font-variant-numeric: tabular-nums; }",
            "th, td { text-align: left; padding: 6px 10px; border-bottom: 1px solid " + GRID + "; font-size: 14px; }",
            "th { font-weight: 600; color: " + MUTED + "; }",
            "svg { width: 100%; height: auto; display: block; }",
            "svg text { font-family: inherit; }",
            ".tick { font-size: 11px; fill: " + MUTED + "; }",
            ".axis { font-size: 12px; fill: " + INK + "; }",
            ".series { font-size: 12px; font-weight: 600; }",
            ".panels { display: grid; grid-template-columns: repeat(auto-fit, minmax(300px, 1fr)); gap: 12px; }",
            ".notes { color: " + MUTED + "; font-size: 14px; padding-left: 18px; }",
            "");
}
