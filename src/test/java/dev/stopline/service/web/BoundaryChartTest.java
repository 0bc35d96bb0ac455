package dev.stopline.service.web;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.stopline.service.web.BoundaryChart.Bound;
import dev.stopline.service.web.BoundaryChart.Point;
import java.io.ByteArrayInputStream;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import javax.xml.parsers.DocumentBuilderFactory;
import org.junit.jupiter.api.Test;
import org.w3c.dom.Document;
import org.w3c.dom.Element;
import org.w3c.dom.NodeList;

/**
 * Geometry and content of the server-rendered boundary chart. Expected pixel positions come from the
 * layout documented on {@link BoundaryChart}: view box 760 x 380, plot box x 64..588 (width 524),
 * y 24..328 (height 304); the z axis is at least -3..3 (two-sided) or -1..3 (one-sided).
 */
class BoundaryChartTest {
    /** Coordinates are written with two decimals; half a unit in the last place is the rounding. */
    private static final double PIXEL_TOLERANCE = 0.005;

    private static final List<Bound> USED = List.of(new Bound(0.2, 2.9, 0.1), new Bound(0.4, 2.5, 0.3));
    private static final List<Bound> AHEAD = List.of(new Bound(0.6, 2.3, 0.9), new Bound(0.8, 2.2, 1.4),
            new Bound(1.0, 2.0, 2.0));
    private static final List<Point> PATH = List.of(new Point(0.2, 0.8), new Point(0.4, 1.2));

    @Test
    void layoutConstants_describeThePlotBoxOfTheJavadoc() {
        assertEquals(524, BoundaryChart.PLOT_WIDTH, "760 - 64 - 172");
        assertEquals(304, BoundaryChart.PLOT_HEIGHT, "380 - 24 - 52");
    }

    @Test
    void boundaryPoint_atFractionAndZ_landsAtTheExpectedPixel() {
        BoundaryChart c = BoundaryChart.zPath(2, USED, AHEAD, PATH, -1, null);
        // largest |value| is 2.9, so the two-sided axis is the minimum -3..3
        assertEquals(-3, c.yLow(), 0);
        assertEquals(3, c.yHigh(), 0);
        assertEquals(1, c.xMax(), 0);
        // x = 64 + 0.4 * 524 = 273.6; y = 24 + (3 - 2.5) / 6 * 304 = 49.333...
        assertEquals(273.6, c.x(0.4), 1e-9, "x of fraction 0.4");
        assertEquals(49.3333333, c.y(2.5), 1e-6, "y of z = 2.5");
        // the lower efficacy boundary mirrors it: y = 24 + (3 + 2.5) / 6 * 304 = 302.666...
        assertEquals(302.6666667, c.y(-2.5), 1e-6, "y of z = -2.5");
        List<double[]> upper = polyline(c.svg(), "efficacy-upper");
        assertPoint(upper.get(1), 273.6, 49.3333333);
        List<double[]> lower = polyline(c.svg(), "efficacy-lower");
        assertPoint(lower.get(1), 273.6, 302.6666667);
    }

    @Test
    void twoSidedChart_drawsBothEfficacyBoundariesAndTheFutilityBand_usedAndPlannedAhead() {
        String svg = BoundaryChart.zPath(2, USED, AHEAD, PATH, -1, null).svg();
        for (String series : List.of("efficacy-upper", "efficacy-lower", "futility-upper", "futility-lower")) {
            assertEquals(2, polyline(svg, series).size(), series + ": one point per look taken");
            // the planned part starts at the last look taken (continuity) and runs through the 3 planned looks
            assertEquals(4, polyline(svg, series + "-planned").size(), series + "-planned");
        }
        // futility band of the last planned look: +/-2.0 at t = 1: x = 588, y = 24 + (3 -/+ 2) / 6 * 304
        List<double[]> fu = polyline(svg, "futility-upper-planned");
        assertPoint(fu.get(3), 588, 74.6666667);
        List<double[]> fl = polyline(svg, "futility-lower-planned");
        assertPoint(fl.get(3), 588, 277.3333333);
        assertEquals(2, polyline(svg, "observed").size());
    }

    @Test
    void oneSidedChart_hasOneEfficacyBoundary_andTheDefaultAxis() {
        BoundaryChart c = BoundaryChart.zPath(1, USED, AHEAD, PATH, -1, null);
        assertEquals(-1, c.yLow(), 0, "one-sided axis starts at -1 when nothing is below it");
        assertEquals(3, c.yHigh(), 0);
        String svg = c.svg();
        assertTrue(svg.contains("data-series=\"efficacy-upper\""));
        assertFalse(svg.contains("efficacy-lower"), "a one-sided plan has no lower efficacy boundary");
        assertTrue(svg.contains("data-series=\"futility\""));
        // z = 0.3 at t = 0.4: y = 24 + (3 - 0.3) / 4 * 304 = 229.2
        assertPoint(polyline(svg, "futility").get(1), 273.6, 229.2);
    }

    @Test
    void labels_nameEveryLineInText_notOnlyByColour() {
        String svg = BoundaryChart.zPath(2, USED, AHEAD, PATH, 1, "look 2: efficacy").svg();
        for (String label : List.of(">upper efficacy<", ">lower efficacy<", ">futility (upper)<",
                ">futility (lower)<", ">observed z<", ">information fraction<", ">z statistic<")) {
            assertTrue(svg.contains(label), "missing label " + label);
        }
        // every line has its own dash pattern: solid path, long dashes efficacy, dots futility
        assertTrue(svg.matches("(?s).*data-series=\"efficacy-upper\"[^>]*stroke-dasharray=\"9 5\".*"));
        assertTrue(svg.matches("(?s).*data-series=\"futility-upper\"[^>]*stroke-dasharray=\"1 5\".*"));
        assertFalse(svg.matches("(?s).*data-series=\"observed\"[^>]*stroke-dasharray.*"), "path is solid");
    }

    @Test
    void crossingLook_isMarkedWithARingAndItsLabel_atThePathPoint() throws Exception {
        List<Point> path = List.of(new Point(0.2, 0.8), new Point(0.4, 2.7));
        String svg = BoundaryChart.zPath(2, USED, List.of(), path, 1, "look 2: efficacy").svg();
        Document d = parse(svg);
        Element g = byAttribute(d, "g", "class", "crossing");
        assertEquals("2", g.getAttribute("data-look"));
        Element ring = (Element) g.getElementsByTagName("circle").item(0);
        // x = 273.6; y = 24 + (3 - 2.7) / 6 * 304 = 39.2
        assertEquals(273.6, Double.parseDouble(ring.getAttribute("cx")), PIXEL_TOLERANCE);
        assertEquals(39.2, Double.parseDouble(ring.getAttribute("cy")), PIXEL_TOLERANCE);
        assertTrue(g.getTextContent().contains("look 2: efficacy"));
    }

    @Test
    void infiniteBoundary_ofALookThatSpendsNothing_isLeftOut_andLargeZIsDrawnAtTheEdge() {
        List<Bound> used = List.of(new Bound(0.1, Double.POSITIVE_INFINITY, Double.NaN), new Bound(0.5, 2.8, Double.NaN));
        BoundaryChart c = BoundaryChart.zPath(1, used, List.of(), List.of(new Point(0.5, 12.0)), -1, null);
        assertEquals(BoundaryChart.Z_LIMIT, c.yHigh(), 0, "axis stops at Z_LIMIT");
        String svg = c.svg();
        assertEquals(1, polyline(svg, "efficacy-upper").size(), "the infinite boundary has no point");
        assertFalse(svg.contains("data-series=\"futility\""), "no futility when every look has NaN");
        assertPoint(polyline(svg, "observed").get(0), 326, 24); // 64 + 0.5 * 524; top edge
    }

    @Test
    void overrunFinalLook_extendsTheFractionAxis_toTheNextTenth() {
        BoundaryChart c = BoundaryChart.zPath(2, List.of(new Bound(1.04, 1.98, Double.NaN)), List.of(),
                List.of(new Point(1.04, 1.0)), -1, null);
        assertEquals(1.1, c.xMax(), 1e-12);
        // x = 64 + 1.04 / 1.1 * 524
        assertEquals(64 + 1.04 / 1.1 * 524, c.x(1.04), 1e-9);
    }

    @Test
    void alwaysValidChart_putsTheAlphaLineAtLog10Alpha_andLabelsIt() {
        List<Point> p = List.of(new Point(0.1, 0.9), new Point(0.2, 0.3), new Point(0.3, 0.02));
        BoundaryChart c = BoundaryChart.alwaysValid(0.05, p, -1, null);
        // smallest shown is min(0.02, alpha / 10 = 0.005): log10 = -2.3, floor -3; top is p = 1
        assertEquals(-3, c.yLow(), 0);
        assertEquals(0, c.yHigh(), 0);
        // y = 24 + (0 - log10 0.05) / 3 * 304 = 24 + 1.30103 / 3 * 304 = 155.837...
        double expected = 24 + -Math.log10(0.05) / 3 * 304;
        assertEquals(expected, c.y(0.05), 1e-9);
        String svg = c.svg();
        List<double[]> alpha = polyline(svg, "alpha");
        assertPoint(alpha.get(0), 64, expected);
        assertPoint(alpha.get(1), 588, expected);
        assertTrue(svg.contains(">alpha = 0.05<"));
        assertTrue(svg.contains(">always-valid p (log scale)<"));
        assertPoint(polyline(svg, "observed").get(2), 64 + 0.3 * 524, 24 + -Math.log10(0.02) / 3 * 304);
    }

    @Test
    void hostileCrossingLabel_isEscaped_andTheSvgStaysWellFormed() throws Exception {
        String hostile = "</text><script>alert('x')</script><text>&amp;\"";
        String svg = BoundaryChart.zPath(1, USED, List.of(), PATH, 0, hostile).svg();
        assertFalse(svg.contains("<script"), "no element can be injected");
        Document d = parse(svg);
        assertEquals(0, d.getElementsByTagName("script").getLength());
        Element g = byAttribute(d, "g", "class", "crossing");
        assertTrue(g.getTextContent().endsWith(hostile), "the label reads back as the raw text: " + g.getTextContent());
    }

    @Test
    void emptyChart_saysNoLookYet() {
        String svg = BoundaryChart.zPath(2, List.of(), AHEAD, List.of(), -1, null).svg();
        assertTrue(svg.contains("no look taken yet"));
        assertEquals(3, polyline(svg, "efficacy-upper-planned").size(), "planned boundaries alone");
    }

    @Test
    void invalidArguments_areRefusedWithTheRule() {
        IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
                () -> BoundaryChart.zPath(3, USED, AHEAD, PATH, -1, null));
        assertEquals("sides 3 not 1 or 2", e.getMessage());
        assertThrows(IllegalArgumentException.class, () -> BoundaryChart.alwaysValid(1.5, List.of(), -1, null));
    }

    // ------------------------------------------------------------------ helpers

    /** The points of the polyline of a series, as (x, y) pairs. */
    static List<double[]> polyline(String svg, String series) {
        Matcher m = Pattern.compile("<polyline data-series=\"" + Pattern.quote(series) + "\"[^>]* points=\"([^\"]*)\"")
                .matcher(svg);
        assertTrue(m.find(), "no polyline " + series);
        List<double[]> out = new ArrayList<>();
        for (String xy : m.group(1).split(" ")) {
            String[] p = xy.split(",");
            out.add(new double[] {Double.parseDouble(p[0]), Double.parseDouble(p[1])});
        }
        return out;
    }

    private static void assertPoint(double[] actual, double x, double y) {
        assertEquals(x, actual[0], PIXEL_TOLERANCE, () -> "x: expected " + x + ", got " + actual[0]
                + ", error " + (actual[0] - x));
        assertEquals(y, actual[1], PIXEL_TOLERANCE, () -> "y: expected " + y + ", got " + actual[1]
                + ", error " + (actual[1] - y));
    }

    static Document parse(String svg) throws Exception {
        DocumentBuilderFactory f = DocumentBuilderFactory.newInstance();
        f.setNamespaceAware(true);
        f.setFeature("http://apache.org/xml/features/disallow-doctype-decl", true);
        return f.newDocumentBuilder().parse(new ByteArrayInputStream(svg.getBytes(StandardCharsets.UTF_8)));
    }

    private static Element byAttribute(Document d, String tag, String attribute, String value) {
        NodeList nodes = d.getElementsByTagNameNS("*", tag);
        for (int i = 0; i < nodes.getLength(); i++) {
            Element e = (Element) nodes.item(i);
            if (value.equals(e.getAttribute(attribute))) {
                return e;
            }
        }
        throw new AssertionError("no <" + tag + " " + attribute + "=\"" + value + "\">");
    }
}
