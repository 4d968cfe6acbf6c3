package dev.twofold.service.ops;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assertions.fail;

import com.fasterxml.jackson.databind.JsonNode;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.service.testing.ApiClient;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.Base64;
import java.util.List;
import java.util.Map;
import java.util.logging.Level;
import java.util.stream.Collectors;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.MethodOrderer;
import org.junit.jupiter.api.Order;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.TestMethodOrder;
import org.junit.jupiter.api.io.TempDir;
import org.openqa.selenium.By;
import org.openqa.selenium.JavascriptExecutor;
import org.openqa.selenium.OutputType;
import org.openqa.selenium.chrome.ChromeDriver;
import org.openqa.selenium.chrome.ChromeDriverService;
import org.openqa.selenium.chrome.ChromeOptions;
import org.openqa.selenium.logging.LogEntry;
import org.openqa.selenium.logging.LogType;
import org.openqa.selenium.logging.LoggingPreferences;
import org.openqa.selenium.support.ui.WebDriverWait;

/**
 * The dashboard in a real headless Chromium, drawing a real retrain history (four versions trained
 * by the real train job on a real PostgreSQL: promoted, rejected, promoted, failed) and real API
 * traffic. Writes {@code target/dashboard.png} (laptop width, whole page) and
 * {@code target/dashboard-wall.png} (2560×1440) as build artefacts.
 *
 * <p>Needs Debian's {@code chromium} and {@code chromium-driver} ({@code .ci/run} installs them);
 * without them the test fails and says so.
 */
@TestMethodOrder(MethodOrderer.OrderAnnotation.class)
class DashboardBrowserTest {

    static final Path CHROMIUM = Path.of("/usr/bin/chromium");
    static final Path CHROMEDRIVER = Path.of("/usr/bin/chromedriver");
    static final Path SCREENSHOT = Path.of("target", "dashboard.png");
    static final Path WALL_SCREENSHOT = Path.of("target", "dashboard-wall.png");
    private static final Duration WAIT = TrainedCommunity.WAIT;
    private static final String[] CHARTS = {"chart-rmse", "chart-precision", "chart-traffic", "chart-latency",
        "chart-strategies"};
    /** A chart that drew lines, markers and axes colours far more pixels than this; an empty canvas none. */
    private static final long MIN_INKED_PIXELS = 1_500;
    private static final int TRAFFIC_ROUNDS = 6;

    @TempDir
    static Path dir;
    @TempDir
    static Path profile;
    private static TrainedCommunity community;
    private static ChromeDriverService driverService;
    private static ChromeDriver browser;
    private static String base;

    @BeforeAll
    static void serveAndOpenABrowser() throws InterruptedException {
        if (!Files.isExecutable(CHROMIUM) || !Files.isExecutable(CHROMEDRIVER)) {
            fail("the dashboard test needs Chromium and its driver at " + CHROMIUM + " and " + CHROMEDRIVER
                    + "; install them with: apt-get install -y chromium chromium-driver (.ci/run does)");
        }
        OpsSettings fast = OpsSettings.defaults().withTrafficInterval(Duration.ofMillis(250))
                .withHistoryRefresh(Duration.ofMillis(200));
        community = TrainedCommunity.start(dir, fast);
        for (int round = 0; round < TRAFFIC_ROUNDS; round++) {
            community.sendTraffic(8 + 2 * round);
            Thread.sleep(fast.trafficInterval().toMillis() + 50);
        }
        base = "http://127.0.0.1:" + community.api.uri("/").getPort();
        awaitData(d -> d.path("retrains").path("versions").size() == 4
                && trafficSamples(d) >= 3, "four versions and three samples with traffic in /dashboard/data");

        ChromeOptions options = new ChromeOptions();
        options.setBinary(CHROMIUM.toFile());
        options.addArguments("--headless=new", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
                "--disable-background-networking", "--disable-component-update", "--disable-sync", "--no-first-run",
                "--user-data-dir=" + profile, "--window-size=1366,768", "--force-device-scale-factor=1");
        LoggingPreferences logs = new LoggingPreferences();
        logs.enable(LogType.BROWSER, Level.ALL);
        options.setCapability("goog:loggingPrefs", logs);
        driverService = new ChromeDriverService.Builder().usingDriverExecutable(CHROMEDRIVER.toFile())
                .usingAnyFreePort().build();
        browser = new ChromeDriver(driverService, options);
        browser.manage().timeouts().pageLoadTimeout(WAIT);
        browser.get(base + "/dashboard");
        awaitRendered();
    }

    @AfterAll
    static void close() {
        try {
            if (browser != null) {
                browser.quit();
            }
        } finally {
            try {
                if (driverService != null) {
                    driverService.stop();
                }
            } finally {
                if (community != null) {
                    community.close();
                }
            }
        }
    }

    @Test
    @Order(1)
    void the_page_loads_everything_from_the_service_with_no_console_errors() {
        assertEquals("Twofold · operator view", browser.getTitle());
        assertNoConsoleErrors();
        @SuppressWarnings("unchecked")
        List<String> resources = (List<String>) js("return performance.getEntriesByType('resource').map(e => e.name);");
        assertTrue(resources.size() >= 5, "resources: " + resources);
        for (String resource : resources) {
            assertTrue(resource.startsWith(base + "/"), "fetched from elsewhere: " + resource);
        }
        assertTrue(resources.stream().anyMatch(r -> r.endsWith("/dashboard/assets/uplot.js")), resources.toString());
    }

    @Test
    @Order(2)
    void every_chart_draws_from_the_real_history_and_traffic() {
        for (String chart : CHARTS) {
            int points = Integer.parseInt((String) js("return document.getElementById('" + chart
                    + "').dataset.points;"));
            assertTrue(points > 0, chart + " drew no points");
            long inked = (Long) js("const c = document.querySelector('#" + chart + " canvas');"
                    + "const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;"
                    + "let n = 0; for (let i = 3; i < d.length; i += 4) { if (d[i] > 0) n++; } return n;");
            assertTrue(inked > MIN_INKED_PIXELS, chart + " inked only " + inked + " pixels");
        }
        // the quality charts show every evaluated version (the failed one has no figures)
        assertEquals("3", js("return document.getElementById('chart-rmse').dataset.points;"));
        String rmse = (String) js("return document.querySelector('#chart-rmse .plot').getAttribute('aria-label');");
        assertTrue(rmse.startsWith("4 versions · live v" + community.liveModel + ": "), rmse);
        assertTrue(rmse.contains("1 rejected (✖)") && rmse.contains("1 failed (▲)"), rmse);
        assertTrue(rmse.contains("global mean baseline"), rmse);
        String legend = text("#chart-rmse .legend");
        for (String entry : List.of("promoted and kept versions", "rejected candidates", "global mean baseline",
                "biases-only baseline", "same model without trust", "failed retrains", "live model")) {
            assertTrue(legend.contains(entry), entry + " not in the legend: " + legend);
        }
        String strategies = text("#chart-strategies .summary");
        assertTrue(strategies.startsWith("Share over the window: model ") && strategies.contains("trust")
                && strategies.contains("popular"), strategies);
        // every round of traffic asks for one known cook twice: a hit among known cooks' misses
        assertTrue(strategies.matches(".*; answered from kept lists [1-9][0-9]? % of those that could be"), strategies);
    }

    @Test
    @Order(3)
    void the_tiles_and_table_say_what_state_things_are_in_with_words_not_only_colour() {
        assertEquals("v" + community.liveModel, text("#tile-model .value"));
        assertTrue(text("#tile-retrain .value").contains("failed"), text("#tile-retrain .value"));
        assertEquals("bad", js("return document.getElementById('tile-retrain').dataset.state;"));
        assertTrue(text("#tile-retrain .note").startsWith("✖ act ·"), text("#tile-retrain .note"));
        assertTrue(text("#tile-latency .note").contains("target ≤ 10 ms"), text("#tile-latency .note"));
        String verdict = text("#verdict");
        assertTrue(verdict.contains("Needs attention") && verdict.contains("last retrain failed"), verdict);

        // the table is redrawn on every refresh: read its rows in one go
        @SuppressWarnings("unchecked")
        List<String> rows = (List<String>) js("return Array.from(document.querySelectorAll('#versions tbody tr'))"
                + ".map(r => Array.from(r.cells).map(c => c.textContent).join(' | '));");
        assertEquals(4, rows.size(), rows.toString());
        assertTrue(rows.get(0).startsWith("v" + community.failedModel + " | ▲ failed"), rows.get(0));
        assertTrue(rows.get(1).startsWith("v" + community.liveModel + " ◆ live | ● promoted"), rows.get(1));
        assertTrue(rows.get(2).startsWith("v" + community.rejectedModel + " | ✖ rejected"), rows.get(2));
        String reason = new ModelRegistry(community.database).find(community.rejectedModel).orElseThrow().reason();
        assertTrue(rows.get(2).endsWith(" | " + reason), rows.get(2) + " does not end with the reason " + reason);
        assertTrue(rows.get(3).startsWith("v" + community.firstModel + " | ● promoted"), rows.get(3));
    }

    @Test
    @Order(4)
    void the_page_refreshes_itself() {
        String first = browser.findElement(By.tagName("body")).getAttribute("data-rendered");
        community.sendTraffic(4);
        new WebDriverWait(browser, WAIT).until(b -> {
            String now = b.findElement(By.tagName("body")).getAttribute("data-rendered");
            return now != null && !now.equals(first);
        });
    }

    @Test
    @Order(5)
    void it_fits_a_laptop_and_a_wall_screen_and_leaves_screenshots() throws IOException {
        long laptopChart = fitsWithoutSideways(1366, 768);
        wholePage(1366, SCREENSHOT);

        long wallChart = fitsWithoutSideways(2560, 1440);
        assertTrue(wallChart > laptopChart, "charts do not grow on a wall screen: " + laptopChart + " -> " + wallChart);
        awaitRendered();
        Files.write(WALL_SCREENSHOT, browser.getScreenshotAs(OutputType.BYTES));
        assertTrue(Files.size(SCREENSHOT) > 20_000 && Files.size(WALL_SCREENSHOT) > 20_000);
        assertNoConsoleErrors(); // nor in any refresh and redraw since the page loaded
    }

    /** Warnings and errors the page logged since the last call (script errors, failed loads, console.error). */
    private static void assertNoConsoleErrors() {
        List<LogEntry> errors = new ArrayList<>();
        for (LogEntry entry : browser.manage().logs().get(LogType.BROWSER)) {
            if (entry.getLevel().intValue() >= Level.WARNING.intValue()) {
                errors.add(entry);
            }
        }
        assertTrue(errors.isEmpty(), "console: " + errors.stream().map(LogEntry::toString)
                .collect(Collectors.joining("\n")));
    }

    /** Sizes the viewport; returns the width of the RMSE chart's canvas in CSS pixels. */
    private static long fitsWithoutSideways(int width, int height) {
        browser.executeCdpCommand("Emulation.setDeviceMetricsOverride", Map.of("width", width, "height", height,
                "deviceScaleFactor", 1, "mobile", false));
        new WebDriverWait(browser, WAIT).until(b -> ((Long) js("return Math.round(document.querySelector("
                + "'#chart-rmse canvas').getBoundingClientRect().width);")) > 0.35 * width);
        long scrollWidth = (Long) js("return document.documentElement.scrollWidth;");
        assertTrue(scrollWidth <= width, "the page scrolls sideways at " + width + " px: " + scrollWidth);
        return (Long) js("return Math.round(document.querySelector('#chart-rmse canvas').getBoundingClientRect()"
                + ".width);");
    }

    /** The whole page as laid out in the current viewport, below the fold included. */
    private static void wholePage(int width, Path to) throws IOException {
        awaitRendered();
        long height = (Long) js("return Math.ceil(document.documentElement.scrollHeight);");
        Map<String, Object> shot = browser.executeCdpCommand("Page.captureScreenshot", Map.of("format", "png",
                "captureBeyondViewport", true, "clip", Map.of("x", 0, "y", 0, "width", width, "height", height,
                        "scale", 1)));
        Files.createDirectories(to.getParent());
        Files.write(to, Base64.getDecoder().decode((String) shot.get("data")));
    }

    private static void awaitRendered() {
        new WebDriverWait(browser, WAIT).until(b -> {
            Object rendered = js("return document.body.dataset.rendered || null;");
            if (rendered == null) {
                return false;
            }
            for (String chart : CHARTS) {
                String points = b.findElement(By.id(chart)).getAttribute("data-points");
                if (points == null || Integer.parseInt(points) == 0) {
                    return false;
                }
            }
            return true;
        });
    }

    private static String text(String css) {
        return (String) js("return document.querySelector('" + css + "').innerText;");
    }

    private static Object js(String script) {
        return ((JavascriptExecutor) browser).executeScript(script);
    }

    private static int trafficSamples(JsonNode data) {
        int n = 0;
        for (JsonNode sample : data.path("traffic").path("samples")) {
            if (sample.path("requestsPerSecond").asDouble() > 0) {
                n++;
            }
        }
        return n;
    }

    private static void awaitData(java.util.function.Predicate<JsonNode> ready, String what)
            throws InterruptedException {
        long deadline = System.nanoTime() + WAIT.toNanos();
        JsonNode data = null;
        while (System.nanoTime() < deadline) {
            data = ApiClient.json(community.api.get("/dashboard/data"));
            if (ready.test(data)) {
                return;
            }
            Thread.sleep(100);
        }
        fail("waited " + WAIT + " for " + what + "; last: " + data);
    }
}
