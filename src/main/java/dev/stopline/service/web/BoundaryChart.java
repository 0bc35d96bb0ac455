package dev.stopline.service.web;

import java.util.ArrayList;
import java.util.Comparator;
import java.util.List;
import java.util.Locale;

/**
 * The evidence of one experiment as a server-rendered SVG: the observed path over information
 * fraction against its stopping boundaries. Pure: built from plain numbers, no framework, no I/O.
 *
 * <p>Two kinds of chart:
 * <ul>
 *   <li>{@link #zPath} (group-sequential and Wald SPRT primaries): the z statistic at each look
 *       against the efficacy boundary (both signs when two-sided) and the futility boundary
 *       (two-sided: the inner region {@code |z| <= f}, drawn at {@code +f} and {@code -f}, with a
 *       negative {@code f}, which stops nothing, drawn at 0). Boundaries at looks already taken are
 *       drawn heavier than the planned boundaries still ahead.</li>
 *   <li>{@link #alwaysValid} (mixture-SPRT primaries): the always-valid p-value on a log scale
 *       against the horizontal line at alpha; the test rejects when the p-value reaches alpha.</li>
 * </ul>
 *
 * <p>Layout (fixed, so that geometry can be tested): a {@value #WIDTH} x {@value #HEIGHT} view box
 * with the plot box from x = {@value #LEFT} to {@code WIDTH - RIGHT} and from y = {@value #TOP} to
 * {@code HEIGHT - BOTTOM}; the right margin holds the labels of lines that run to the end. A fraction t maps linearly to
 * {@code LEFT + t / xMax * PLOT_WIDTH}, a z value to {@code TOP + (yHigh - z) / (yHigh - yLow) * PLOT_HEIGHT}
 * (log10 of p on the p scale). Values outside the axis range are drawn at its edge. Meaning is never
 * carried by colour alone: every line has its own dash pattern and a text label.
 */
public final class BoundaryChart {
    public static final int WIDTH = 760;
    public static final int HEIGHT = 380;
    public static final int LEFT = 64;
    public static final int RIGHT = 172;
    public static final int TOP = 24;
    public static final int BOTTOM = 52;
    public static final int PLOT_WIDTH = WIDTH - LEFT - RIGHT;
    public static final int PLOT_HEIGHT = HEIGHT - TOP - BOTTOM;
    /** The z axis never extends beyond +/- this; larger values are drawn at the edge. */
    public static final double Z_LIMIT = 8;
    /** Markers are drawn at each look only up to this many looks (SPRTs look at every snapshot). */
    static final int MAX_MARKERS = 30;

    private static final String INK = "#1d232b";
    private static final String EFFICACY = "#0b6e4f";
    private static final String FUTILITY = "#a14d00";
    private static final String GRID = "#e4e1d8";

    /** A value (z or p) at an information fraction. */
    public record Point(double fraction, double value) {
    }

    /** The boundary at one look; {@code futilityZ} is NaN when the look has none. */
    public record Bound(double fraction, double efficacyZ, double futilityZ) {
    }

    /** Which axis the values are on. */
    public enum Scale { Z, P }

    private enum Stroke {
        PATH(INK, 2.6, null, 1),
        USED_EFFICACY(EFFICACY, 2, "9 5", 1),
        AHEAD_EFFICACY(EFFICACY, 1.3, "9 5", 0.6),
        USED_FUTILITY(FUTILITY, 2.2, "1 5", 1),
        AHEAD_FUTILITY(FUTILITY, 1.4, "1 5", 0.6),
        ALPHA(EFFICACY, 1.8, "9 5", 1);

        final String colour;
        final double width;
        final String dash;
        final double opacity;

        Stroke(String colour, double width, String dash, double opacity) {
            this.colour = colour;
            this.width = width;
            this.dash = dash;
            this.opacity = opacity;
        }
    }

    private record Line(String series, String label, List<Point> points, Stroke stroke) {
    }

    private final Scale scale;
    private final double xMax;
    private final double yLow;
    private final double yHigh;
    private final List<Line> lines;
    private final List<Point> path;
    private final String pathLabel;
    private final int crossing;
    private final String crossingLabel;
    private final String description;

    private BoundaryChart(Scale scale, double xMax, double yLow, double yHigh, List<Line> lines, List<Point> path,
                          String pathLabel, int crossing, String crossingLabel, String description) {
        this.scale = scale;
        this.xMax = xMax;
        this.yLow = yLow;
        this.yHigh = yHigh;
        this.lines = List.copyOf(lines);
        this.path = List.copyOf(path);
        this.pathLabel = pathLabel;
        this.crossing = crossing;
        this.crossingLabel = crossingLabel;
        this.description = description;
    }

    /**
     * The z path against z boundaries.
     *
     * @param sides         1 or 2; two-sided plans get both efficacy boundaries and a two-sided futility band
     * @param used          boundaries at the looks already taken, in order
     * @param ahead         planned boundaries at fractions beyond the last look taken, in order
     * @param path          observed z at each look taken
     * @param crossing      index into {@code path} of the look that stopped the analysis, or -1
     * @param crossingLabel text at the crossing marker (e.g. "look 3: efficacy")
     */
    public static BoundaryChart zPath(int sides, List<Bound> used, List<Bound> ahead, List<Point> path, int crossing,
                                      String crossingLabel) {
        if (sides != 1 && sides != 2) {
            throw new IllegalArgumentException("sides " + sides + " not 1 or 2");
        }
        List<Line> lines = new ArrayList<>();
        addBoundary(lines, "efficacy-upper", sides == 2 ? "upper efficacy" : "efficacy", used, ahead,
                b -> b.efficacyZ(), Stroke.USED_EFFICACY, Stroke.AHEAD_EFFICACY);
        if (sides == 2) {
            addBoundary(lines, "efficacy-lower", "lower efficacy", used, ahead, b -> -b.efficacyZ(),
                    Stroke.USED_EFFICACY, Stroke.AHEAD_EFFICACY);
            addBoundary(lines, "futility-upper", "futility (upper)", used, ahead,
                    b -> Double.isNaN(b.futilityZ()) ? Double.NaN : Math.max(0, b.futilityZ()),
                    Stroke.USED_FUTILITY, Stroke.AHEAD_FUTILITY);
            addBoundary(lines, "futility-lower", "futility (lower)", used, ahead,
                    b -> Double.isNaN(b.futilityZ()) ? Double.NaN : -Math.max(0, b.futilityZ()),
                    Stroke.USED_FUTILITY, Stroke.AHEAD_FUTILITY);
        } else {
            addBoundary(lines, "futility", "futility", used, ahead, b -> b.futilityZ(), Stroke.USED_FUTILITY,
                    Stroke.AHEAD_FUTILITY);
        }
        double lo = 0;
        double hi = 0;
        for (Line l : lines) {
            for (Point p : l.points()) {
                lo = Math.min(lo, p.value());
                hi = Math.max(hi, p.value());
            }
        }
        for (Point p : path) {
            if (Double.isFinite(p.value())) {
                lo = Math.min(lo, p.value());
                hi = Math.max(hi, p.value());
            }
        }
        double yLow;
        double yHigh;
        if (sides == 2) {
            double m = Math.min(Z_LIMIT, Math.max(3, Math.ceil(Math.max(-lo, hi))));
            yLow = -m;
            yHigh = m;
        } else {
            yHigh = Math.min(Z_LIMIT, Math.max(3, Math.ceil(hi)));
            yLow = Math.max(-Z_LIMIT, Math.min(-1, Math.floor(lo)));
        }
        String desc = String.format(Locale.ROOT, "Observed z statistic at %d look(s) over information fraction, "
                        + "against the %s efficacy boundary%s%s.", path.size(), sides == 2 ? "two-sided" : "one-sided",
                hasSeries(lines, "futility") ? " and the futility boundary" : "",
                crossing >= 0 ? "; " + crossingLabel : "");
        return new BoundaryChart(Scale.Z, xMax(used, ahead, path), yLow, yHigh, lines, path, "observed z", crossing,
                crossingLabel, desc);
    }

    /**
     * The always-valid p-value path against alpha.
     *
     * @param alpha         the plan's alpha; the test rejects when p reaches it
     * @param pValues       always-valid p-value at each look, in order (values in (0, 1])
     * @param crossing      index into {@code pValues} of the look that rejected, or -1
     * @param crossingLabel text at the crossing marker
     */
    public static BoundaryChart alwaysValid(double alpha, List<Point> pValues, int crossing, String crossingLabel) {
        if (!(alpha > 0 && alpha < 1)) {
            throw new IllegalArgumentException("alpha " + alpha + " not in (0, 1)");
        }
        double min = alpha / 10;
        for (Point p : pValues) {
            if (p.value() > 0) {
                min = Math.min(min, p.value());
            }
        }
        double yLow = Math.max(-12, Math.floor(Math.log10(min)));
        double xMax = xMax(List.of(), List.of(), pValues);
        List<Line> lines = List.of(new Line("alpha", String.format(Locale.ROOT, "alpha = %s", trim(alpha)),
                List.of(new Point(0, alpha), new Point(xMax, alpha)), Stroke.ALPHA));
        String desc = String.format(Locale.ROOT, "Always-valid p-value at %d look(s) over information fraction, "
                + "log scale, against alpha = %s%s.", pValues.size(), trim(alpha),
                crossing >= 0 ? "; " + crossingLabel : "");
        return new BoundaryChart(Scale.P, xMax, yLow, 0, lines, pValues, "always-valid p", crossing, crossingLabel,
                desc);
    }

    private interface BoundValue {
        double of(Bound b);
    }

    private static void addBoundary(List<Line> lines, String series, String label, List<Bound> used,
                                    List<Bound> ahead, BoundValue value, Stroke usedStroke, Stroke aheadStroke) {
        List<Point> u = points(used, value);
        List<Point> a = new ArrayList<>();
        if (!u.isEmpty() && !ahead.isEmpty()) {
            a.add(u.get(u.size() - 1));
        }
        a.addAll(points(ahead, value));
        boolean aheadDrawn = a.size() > (u.isEmpty() ? 0 : 1);
        if (!u.isEmpty()) {
            lines.add(new Line(series, aheadDrawn ? null : label, u, usedStroke));
        }
        if (aheadDrawn) {
            lines.add(new Line(series + "-planned", label, a, aheadStroke));
        }
    }

    /** Finite boundary values only: a look that spends nothing has an infinite boundary and is left out. */
    private static List<Point> points(List<Bound> bounds, BoundValue value) {
        List<Point> out = new ArrayList<>();
        for (Bound b : bounds) {
            double v = value.of(b);
            if (Double.isFinite(v)) {
                out.add(new Point(b.fraction(), v));
            }
        }
        return out;
    }

    private static boolean hasSeries(List<Line> lines, String prefix) {
        return lines.stream().anyMatch(l -> l.series().startsWith(prefix));
    }

    private static double xMax(List<Bound> used, List<Bound> ahead, List<Point> path) {
        double m = 1;
        for (Bound b : used) {
            m = Math.max(m, b.fraction());
        }
        for (Bound b : ahead) {
            m = Math.max(m, b.fraction());
        }
        for (Point p : path) {
            m = Math.max(m, p.fraction());
        }
        return Math.ceil(m * 10 - 1e-9) / 10;
    }

    // ------------------------------------------------------------------ geometry

    public Scale scale() {
        return scale;
    }

    /** The axis range: fractions from 0 to {@code xMax}. */
    public double xMax() {
        return xMax;
    }

    /** Lower end of the value axis (z, or log10 p on the p scale). */
    public double yLow() {
        return yLow;
    }

    /** Upper end of the value axis (z, or log10 p on the p scale). */
    public double yHigh() {
        return yHigh;
    }

    /** Pixel x of an information fraction (clamped to the plot box). */
    public double x(double fraction) {
        double t = Math.max(0, Math.min(xMax, fraction));
        return LEFT + t / xMax * PLOT_WIDTH;
    }

    /** Pixel y of a value: a z statistic, or a p-value on the p scale (clamped to the plot box). */
    public double y(double value) {
        double v = scale == Scale.P ? Math.log10(value) : value;
        if (Double.isNaN(v)) {
            v = yLow;
        }
        v = Math.max(yLow, Math.min(yHigh, v));
        return TOP + (yHigh - v) / (yHigh - yLow) * PLOT_HEIGHT;
    }

    // ------------------------------------------------------------------ rendering

    /** The chart as a standalone {@code <svg>} element (presentation attributes inline, no scripts). */
    public String svg() {
        StringBuilder b = new StringBuilder(8192);
        b.append("<svg xmlns=\"http://www.w3.org/2000/svg\" class=\"chart\" viewBox=\"0 0 ").append(WIDTH).append(' ')
                .append(HEIGHT).append("\" width=\"").append(WIDTH).append("\" height=\"").append(HEIGHT)
                .append("\" role=\"img\" aria-labelledby=\"chart-title chart-desc\" data-scale=\"")
                .append(scale.name().toLowerCase(Locale.ROOT)).append("\" font-family=\"system-ui, -apple-system, "
                        + "'Segoe UI', Roboto, 'Helvetica Neue', Arial, sans-serif\" font-size=\"12\">");
        b.append("<title id=\"chart-title\">").append(scale == Scale.Z ? "z statistic against stopping boundaries"
                : "always-valid p-value against alpha").append("</title>");
        b.append("<desc id=\"chart-desc\">").append(Html.esc(description)).append("</desc>");
        b.append(String.format(Locale.ROOT, "<rect x=\"%d\" y=\"%d\" width=\"%d\" height=\"%d\" fill=\"#ffffff\" "
                + "stroke=\"#b9b4a7\"/>", LEFT, TOP, PLOT_WIDTH, PLOT_HEIGHT));
        grid(b);
        for (Line l : lines) {
            polyline(b, l.series(), l.points(), l.stroke());
        }
        pathAndMarkers(b);
        labels(b);
        if (path.isEmpty()) {
            b.append(String.format(Locale.ROOT, "<text x=\"%.2f\" y=\"%.2f\" text-anchor=\"middle\" fill=\"#5b6470\">"
                    + "no look taken yet</text>", LEFT + PLOT_WIDTH / 2.0, TOP + PLOT_HEIGHT / 2.0 - 8));
        }
        b.append("</svg>");
        return b.toString();
    }

    private void grid(StringBuilder b) {
        double bottom = TOP + PLOT_HEIGHT;
        for (int i = 0; i <= Math.round(xMax * 10); i++) {
            double t = i / 10.0;
            double px = x(t);
            b.append(String.format(Locale.ROOT, "<line x1=\"%.2f\" y1=\"%d\" x2=\"%.2f\" y2=\"%.2f\" stroke=\"%s\"/>",
                    px, TOP, px, bottom, GRID));
            if (i % 2 == 0) {
                b.append(String.format(Locale.ROOT, "<text x=\"%.2f\" y=\"%.2f\" text-anchor=\"middle\" "
                        + "fill=\"#3b434d\">%s</text>", px, bottom + 16, trim(t)));
            }
        }
        if (xMax > 1) {
            b.append(String.format(Locale.ROOT, "<line x1=\"%.2f\" y1=\"%d\" x2=\"%.2f\" y2=\"%.2f\" stroke=\"#8d877a\" "
                    + "stroke-dasharray=\"3 3\"/>", x(1), TOP, x(1), bottom));
        }
        double step = scale == Scale.Z && yHigh - yLow > 10 ? 2 : 1;
        for (double v = Math.ceil(yLow / step) * step; v <= yHigh + 1e-9; v += step) {
            double py = TOP + (yHigh - v) / (yHigh - yLow) * PLOT_HEIGHT;
            boolean zero = scale == Scale.Z && v == 0;
            b.append(String.format(Locale.ROOT, "<line x1=\"%d\" y1=\"%.2f\" x2=\"%d\" y2=\"%.2f\" stroke=\"%s\"%s/>",
                    LEFT, py, LEFT + PLOT_WIDTH, py, zero ? "#8d877a" : GRID, zero ? " stroke-width=\"1.2\"" : ""));
            String text = scale == Scale.Z ? trim(v).replace("-", "\u2212") : pLabel(v);
            b.append(String.format(Locale.ROOT, "<text x=\"%d\" y=\"%.2f\" text-anchor=\"end\" fill=\"#3b434d\">%s"
                    + "</text>", LEFT - 6, py + 4, text));
        }
        b.append(String.format(Locale.ROOT, "<text x=\"%.2f\" y=\"%d\" text-anchor=\"middle\" fill=\"%s\" "
                + "font-weight=\"600\">information fraction</text>", LEFT + PLOT_WIDTH / 2.0, HEIGHT - 10, INK));
        b.append(String.format(Locale.ROOT, "<text x=\"14\" y=\"%.2f\" text-anchor=\"middle\" fill=\"%s\" "
                        + "font-weight=\"600\" transform=\"rotate(-90 14 %.2f)\">%s</text>", TOP + PLOT_HEIGHT / 2.0,
                INK, TOP + PLOT_HEIGHT / 2.0, scale == Scale.Z ? "z statistic" : "always-valid p (log scale)"));
    }

    private static String pLabel(double log10) {
        long e = Math.round(log10);
        return e == 0 ? "1" : e >= -3 ? trim(Math.pow(10, e)) : "1e" + e;
    }

    private void polyline(StringBuilder b, String series, List<Point> points, Stroke s) {
        if (points.isEmpty()) {
            return;
        }
        b.append("<polyline data-series=\"").append(series).append("\" fill=\"none\" stroke=\"").append(s.colour)
                .append("\" stroke-width=\"").append(trim(s.width)).append('"');
        if (s.dash != null) {
            b.append(" stroke-dasharray=\"").append(s.dash).append("\" stroke-linecap=\"round\"");
        }
        if (s.opacity < 1) {
            b.append(" stroke-opacity=\"").append(trim(s.opacity)).append('"');
        }
        b.append(" points=\"").append(coordinates(points)).append("\"/>");
        if (points.size() == 1) {
            Point p = points.get(0);
            b.append(String.format(Locale.ROOT, "<path data-series=\"%s\" d=\"M%.2f %.2f h-6 m12 0 h-6\" stroke=\"%s\" "
                    + "stroke-width=\"%s\"/>", series, x(p.fraction()), y(p.value()), s.colour, trim(s.width)));
        }
    }

    /** The {@code points} attribute value: "x,y x,y ..." with two decimals. */
    String coordinates(List<Point> points) {
        StringBuilder b = new StringBuilder();
        for (Point p : points) {
            if (b.length() > 0) {
                b.append(' ');
            }
            b.append(String.format(Locale.ROOT, "%.2f,%.2f", x(p.fraction()), y(p.value())));
        }
        return b.toString();
    }

    private void pathAndMarkers(StringBuilder b) {
        List<Point> drawable = path.stream().filter(p -> Double.isFinite(p.value())).toList();
        polyline(b, "observed", drawable, Stroke.PATH);
        if (path.size() <= MAX_MARKERS) {
            for (int i = 0; i < path.size(); i++) {
                Point p = path.get(i);
                if (!Double.isFinite(p.value())) {
                    continue;
                }
                b.append(String.format(Locale.ROOT, "<circle data-look=\"%d\" cx=\"%.2f\" cy=\"%.2f\" r=\"3.6\" "
                                + "fill=\"%s\" stroke=\"#ffffff\" stroke-width=\"1.2\"><title>look %d: fraction %s, %s %s"
                                + "</title></circle>", i + 1, x(p.fraction()), y(p.value()), INK, i + 1,
                        Html.fixed(p.fraction(), 3), scale == Scale.Z ? "z" : "p",
                        scale == Scale.Z ? Html.fixed(p.value(), 2) : Html.prob(p.value())));
            }
        }
        if (crossing >= 0 && crossing < path.size()) {
            Point p = path.get(crossing);
            double cx = x(p.fraction());
            double cy = y(p.value());
            boolean above = cy - TOP > 30;
            double ty = above ? cy - 14 : cy + 24;
            String anchor = cx > LEFT + PLOT_WIDTH - 90 ? "end" : cx < LEFT + 90 ? "start" : "middle";
            b.append(String.format(Locale.ROOT, "<g class=\"crossing\" data-look=\"%d\"><circle cx=\"%.2f\" cy=\"%.2f\" "
                            + "r=\"8\" fill=\"none\" stroke=\"%s\" stroke-width=\"2\"/><text x=\"%.2f\" y=\"%.2f\" "
                            + "text-anchor=\"%s\" font-weight=\"700\" fill=\"%s\" paint-order=\"stroke\" "
                            + "stroke=\"#ffffff\" stroke-width=\"4\">\u25c9 %s</text></g>", crossing + 1, cx, cy, INK,
                    cx, ty, anchor, INK, Html.esc(crossingLabel)));
        }
    }

    /**
     * Line labels just right of where each line ends (in the right margin when it ends at the last
     * fraction), pushed apart vertically to stay legible.
     */
    private void labels(StringBuilder b) {
        record Label(double x, double y, String text, String colour, String series) {
        }
        List<Label> out = new ArrayList<>();
        for (Line l : lines) {
            if (l.label() != null && !l.points().isEmpty()) {
                Point last = l.points().get(l.points().size() - 1);
                out.add(new Label(x(last.fraction()), y(last.value()), l.label(), l.stroke().colour, l.series()));
            }
        }
        List<Point> drawable = path.stream().filter(p -> Double.isFinite(p.value())).toList();
        if (!drawable.isEmpty()) {
            Point last = drawable.get(drawable.size() - 1);
            out.add(new Label(x(last.fraction()), y(last.value()), pathLabel, INK, "observed"));
        }
        out.sort(Comparator.comparingDouble(Label::y));
        double[] ys = new double[out.size()];
        double gap = 14;
        for (int i = 0; i < ys.length; i++) {
            ys[i] = Math.max(out.get(i).y(), i == 0 ? TOP + 4 : ys[i - 1] + gap);
        }
        for (int i = ys.length - 1; i >= 0; i--) {
            double limit = i == ys.length - 1 ? TOP + PLOT_HEIGHT : ys[i + 1] - gap;
            ys[i] = Math.min(ys[i], limit);
        }
        for (int i = 0; i < ys.length; i++) {
            Label l = out.get(i);
            b.append(String.format(Locale.ROOT, "<text data-label=\"%s\" x=\"%.2f\" y=\"%.2f\" fill=\"%s\" "
                            + "font-weight=\"600\" paint-order=\"stroke\" stroke=\"#ffffff\" stroke-width=\"3\">%s</text>",
                    l.series(), l.x() + ("observed".equals(l.series()) ? 14 : 9), ys[i] + 4, l.colour(),
                    Html.esc(l.text())));
        }
    }

    /** Shortest plain decimal for axis and alpha labels (0.05, 2, 0.2). */
    static String trim(double v) {
        String s = String.format(Locale.ROOT, "%.6f", v == 0 ? 0.0 : v);
        s = s.replaceAll("0+$", "");
        return s.endsWith(".") ? s.substring(0, s.length() - 1) : s;
    }
}
