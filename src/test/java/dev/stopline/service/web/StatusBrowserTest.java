package dev.stopline.service.web;

import static io.restassured.RestAssured.given;
import static org.hamcrest.Matchers.containsString;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assertions.fail;

import dev.stopline.demo.BookshopScenario;
import dev.stopline.monitor.Decision;
import dev.stopline.monitor.LookRecord;
import dev.stopline.plan.PlanParser;
import dev.stopline.service.ingest.CountsIngest;
import dev.stopline.service.plans.PlanRegistry;
import dev.stopline.service.store.Store;
import dev.stopline.testing.KafkaTestResource;
import dev.stopline.wire.Snapshot;
import dev.stopline.wire.SnapshotWriter;
import io.quarkus.test.common.QuarkusTestResource;
import io.quarkus.test.common.http.TestHTTPResource;
import io.quarkus.test.junit.QuarkusTest;
import jakarta.inject.Inject;
import java.io.File;
import java.io.IOException;
import java.net.URL;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.concurrent.TimeUnit;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;

/**
 * The status page in a real browser: the daemon runs (real embedded Kafka broker, in-memory H2), an
 * experiment is registered and fed seeded bookshop snapshots through the ingest path the Kafka consumer
 * uses, and Debian's headless chromium loads the page. The expected numbers are the looks the daemon
 * stored ({@link Store#looks}).
 *
 * <p>Needs {@code chromium} on the PATH (README, "Set up"; {@code .ci/run} installs it). Without it
 * the test fails and says how to install it: a page nobody rendered is not a tested page.
 */
@QuarkusTest
@QuarkusTestResource(KafkaTestResource.class)
class StatusBrowserTest {
    /**
     * An id of our own (the checkout redesign on an invented second storefront), so that other tests
     * feeding the example plans cannot interleave with ours.
     */
    static final String ID = "checkout-redesign-eu";
    private static final long SEED = 20260301L; // any fixed seed: the scenario is deterministic
    private static final Instant START = Instant.parse("2026-03-02T00:00:00Z");
    private static final int HOURS = 48;
    private static final long BROWSER_TIMEOUT_SECONDS = 90;
    /**
     * A hostile actor name (free text from the X-Stopline-Actor header, shown in the audit trail); its
     * script would set the document title if it were ever executed.
     */
    private static final String HOSTILE = "ops <b>bot</b> <script>document.title='injected'</script> & co";

    @Inject
    PlanRegistry plans;
    @Inject
    CountsIngest ingest;
    @Inject
    Store store;

    @TestHTTPResource("/")
    URL root;

    @BeforeEach
    void registerAndFeed() throws IOException {
        if (store.state(ID).isPresent()) {
            return; // already fed by an earlier test of this class (one application per run)
        }
        String yaml = Files.readString(Path.of("config/plans/checkout-redesign.yaml"))
                .replace("experiment: checkout-redesign", "experiment: " + ID);
        assertTrue(yaml.contains("experiment: " + ID), "the example plan changed; adapt the replacement above");
        PlanRegistry.Result r = plans.register(yaml.getBytes(StandardCharsets.UTF_8), PlanParser.Format.YAML, HOSTILE);
        assertEquals(ID, r.experiment());
        BookshopScenario scenario = BookshopScenario.seeded(SEED, START);
        int index = scenario.experimentIds().indexOf("checkout-redesign");
        for (int h = 0; h < HOURS; h++) {
            Snapshot s = scenario.tick().get(index);
            Snapshot ours = new Snapshot(ID, s.sequence(), s.observedAt(), s.arms());
            ingest.accept(new ConsumerRecord<>("stopline.counts", 0, h, ID,
                    SnapshotWriter.toJson(ours).getBytes(StandardCharsets.UTF_8)));
        }
    }

    @Test
    void experimentPage_inChromium_rendersTheChartAndTheAlphaLedgerOfTheStoredLooks() throws Exception {
        List<LookRecord> primary = store.looks(ID).stream().filter(l -> LookRecord.PRIMARY.equals(l.role())).toList();
        assertTrue(primary.size() >= 2, "the seeded scenario reaches at least two formal looks: " + primary.size());

        String dom = chromium("--dump-dom", root + "experiments/" + ID);

        assertTrue(dom.contains("<svg xmlns=\"http://www.w3.org/2000/svg\" class=\"chart\""), "chart rendered");
        List<double[]> path = BoundaryChartTest.polyline(dom, "observed");
        assertEquals(primary.size(), path.size(), "one path point per stored look");
        double xMax = Math.max(1, Math.ceil(primary.stream().mapToDouble(LookRecord::informationFraction).max()
                .orElse(1) * 10 - 1e-9) / 10);
        for (int i = 0; i < primary.size(); i++) {
            // layout of BoundaryChart: x = 64 + t / xMax * 524
            double x = 64 + primary.get(i).informationFraction() / xMax * 524;
            assertEquals(x, path.get(i)[0], 0.005, "x of look " + (i + 1));
        }
        for (String series : List.of("efficacy-upper", "efficacy-lower", "futility-upper", "futility-lower")) {
            assertFalse(BoundaryChartTest.polyline(dom, series).isEmpty(), series);
        }
        for (LookRecord l : primary) {
            String row = StatusPagesTest.row(dom, "data-look=\"" + l.look() + "\"");
            assertEquals(Double.toString(l.informationFraction()), StatusPagesTest.value(row, "fraction"));
            assertEquals(Double.toString(l.z()), StatusPagesTest.value(row, "z"), "z of look " + l.look());
            assertEquals(Double.toString(l.efficacyZ()), StatusPagesTest.value(row, "efficacy"));
            assertEquals(Double.toString(l.cumulativeAlphaSpent()), StatusPagesTest.value(row, "alpha"));
            assertTrue(row.contains(">" + String.format(Locale.ROOT, "%.2f", l.z()) + "<"), "shown z: " + row);
            assertTrue(row.contains(">\u00b1" + String.format(Locale.ROOT, "%.3f", l.efficacyZ()) + "<"), row);
        }
        LookRecord last = primary.get(primary.size() - 1);
        if (last.decision() == Decision.EFFICACY || last.decision() == Decision.FUTILITY) {
            assertTrue(dom.contains("look " + last.look() + ": " + last.decision().wireName()), "crossing label");
        }
        assertTrue(dom.contains("<title>" + ID + " \u00b7 Stopline</title>"), "the hostile actor ran no script");
        assertTrue(dom.contains("ops &lt;b&gt;bot&lt;/b&gt; &lt;script&gt;"), "shown as text in the audit trail");

        Path shot = Path.of("target", "status-page.png");
        Files.deleteIfExists(shot);
        chromium("--screenshot=" + shot.toAbsolutePath(), "--window-size=1280,900", root + "experiments/" + ID);
        assertTrue(Files.size(shot) > 10_000, "screenshot written: " + Files.size(shot) + " bytes");
    }

    @Test
    void indexPage_listsTheExperiment_andAnUnknownIdGetsTheHtml404() {
        given().when().get("/").then().statusCode(200).contentType(containsString("text/html"))
                .body(containsString("href=\"/experiments/" + ID + "\""))
                .body(containsString("data-experiment=\"checkout-redesign\""));
        given().when().get("/experiments/no-such-experiment").then().statusCode(404)
                .contentType(containsString("text/html"))
                .body(containsString("No such experiment"), containsString("<code>no-such-experiment</code>"));
    }

    // ------------------------------------------------------------------ chromium

    /** Runs headless chromium with the given arguments and returns its standard output. */
    static String chromium(String... args) throws IOException, InterruptedException {
        String exe = findChromium();
        Path profile = Files.createTempDirectory("stopline-chromium");
        Path stderr = Files.createTempFile("stopline-chromium", ".log");
        List<String> cmd = new ArrayList<>(List.of(exe, "--headless", "--no-sandbox", "--disable-gpu",
                "--disable-background-networking", "--disable-component-update", "--no-first-run",
                "--user-data-dir=" + profile));
        cmd.addAll(List.of(args));
        Process p = new ProcessBuilder(cmd).redirectError(stderr.toFile()).start();
        byte[] out = p.getInputStream().readAllBytes();
        if (!p.waitFor(BROWSER_TIMEOUT_SECONDS, TimeUnit.SECONDS)) {
            p.destroyForcibly();
            fail("chromium did not finish within " + BROWSER_TIMEOUT_SECONDS + " s: " + cmd);
        }
        if (p.exitValue() != 0) {
            fail("chromium exited with " + p.exitValue() + ": " + Files.readString(stderr));
        }
        return new String(out, StandardCharsets.UTF_8);
    }

    private static String findChromium() {
        for (String dir : System.getenv().getOrDefault("PATH", "").split(File.pathSeparator)) {
            for (String name : List.of("chromium", "chromium-browser")) {
                File f = new File(dir, name);
                if (f.canExecute()) {
                    return f.getPath();
                }
            }
        }
        return fail("chromium is not installed, so the status page cannot be checked in a browser. Install it with "
                + "`apt-get update && apt-get install -y chromium` (Debian; .ci/run does this) and run again.");
    }
}
