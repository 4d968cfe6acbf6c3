package dev.twofold.service.ops;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.HashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Test;

/**
 * The Prometheus and dashboard files in {@code deploy/} parse, hold what an operator needs, and
 * use the service's own targets. That every series they read is really exposed is checked against
 * a live scrape in {@link MetricsEndpointTest}.
 */
class MonitoringFilesTest {

    private static final Pattern DURATION = Pattern.compile("[0-9]+(ms|s|m|h|d|w|y)");
    private static final Pattern LAST_THRESHOLD = Pattern.compile(">\\s*([0-9.]+)\\s*$");

    @Test
    void the_scrape_configuration_scrapes_metrics_and_loads_the_alert_rules() {
        JsonNode config = MonitoringFiles.yaml(MonitoringFiles.SCRAPE_CONFIG);
        JsonNode job = null;
        for (JsonNode j : config.path("scrape_configs")) {
            if (j.path("job_name").asText().equals("twofold")) {
                job = j;
            }
        }
        assertTrue(job != null, "no scrape job named twofold");
        assertEquals("/metrics", job.path("metrics_path").asText());
        assertTrue(job.path("static_configs").get(0).path("targets").size() > 0);
        for (JsonNode file : config.path("rule_files")) {
            assertTrue(Files.isRegularFile(MonitoringFiles.PROMETHEUS.resolve(file.asText())), file.asText());
        }
        assertEquals("alerts.yml", config.path("rule_files").get(0).asText());
    }

    @Test
    void every_alert_rule_is_complete_and_the_asked_for_alerts_exist() {
        Set<String> names = new HashSet<>();
        for (JsonNode group : MonitoringFiles.yaml(MonitoringFiles.ALERT_RULES).path("groups")) {
            assertFalse(group.path("name").asText().isBlank());
            for (JsonNode rule : group.path("rules")) {
                String name = rule.path("alert").asText();
                assertTrue(name.matches("Twofold[A-Za-z0-9]+"), name);
                assertTrue(names.add(name), "two alerts named " + name);
                String expr = rule.path("expr").asText();
                assertFalse(expr.isBlank(), name);
                assertNull(MonitoringFiles.bracketProblem(expr), name + ": " + expr);
                assertTrue(DURATION.matcher(rule.path("for").asText()).matches(), name + " has no 'for' duration");
                assertTrue(Set.of("page", "ticket").contains(rule.path("labels").path("severity").asText()), name);
                assertFalse(rule.path("annotations").path("summary").asText().isBlank(), name);
                assertFalse(rule.path("annotations").path("description").asText().isBlank(), name);
            }
        }
        for (String wanted : List.of("TwofoldRetrainFailed", "TwofoldRetrainMissing", "TwofoldModelStale",
                "TwofoldLatencyP99OverTarget", "TwofoldServerErrorRate", "TwofoldRetrainQualityDrop",
                "TwofoldLiveModelWorseThanPrevious")) {
            assertTrue(names.contains(wanted), wanted + " is missing");
        }
    }

    @Test
    void the_alert_thresholds_are_the_targets_the_service_and_its_dashboard_use() {
        Map<String, String> alerts = MonitoringFiles.alertExpressions();
        assertEquals(OpsSettings.LATENCY_TARGET_MS / 1000.0, threshold(alerts.get("TwofoldLatencyP99OverTarget")));
        assertEquals(OpsSettings.SERVER_ERROR_RATE_LIMIT, threshold(alerts.get("TwofoldServerErrorRate")));
        assertEquals(OpsSettings.MODEL_AGE_LIMIT.toSeconds(), threshold(alerts.get("TwofoldModelStale")));
        assertEquals(OpsSettings.RETRAIN_MISSING_AFTER.toSeconds(), threshold(alerts.get("TwofoldRetrainMissing")));
        assertTrue(alerts.get("TwofoldLatencyP99OverTarget").contains("histogram_quantile(0.99,"));
    }

    @Test
    void every_dashboard_definition_parses_and_queries_only_with_balanced_expressions() {
        List<Path> dashboards = MonitoringFiles.dashboards();
        assertFalse(dashboards.isEmpty(), "no dashboard in " + MonitoringFiles.DASHBOARDS);
        for (Path file : dashboards) {
            JsonNode dashboard = MonitoringFiles.json(file);
            assertFalse(dashboard.path("title").asText().isBlank(), file.toString());
            assertFalse(dashboard.path("uid").asText().isBlank(), file.toString());
            assertTrue(dashboard.path("panels").size() > 0, file.toString());
            Set<Integer> ids = new HashSet<>();
            for (JsonNode panel : dashboard.path("panels")) {
                assertTrue(ids.add(panel.path("id").asInt()), file + ": panel id " + panel.path("id") + " twice");
                assertFalse(panel.path("title").asText().isBlank(), file + ": a panel without a title");
                if (!panel.path("type").asText().equals("row")) {
                    assertTrue(panel.path("targets").size() > 0, file + ": " + panel.path("title") + " queries nothing");
                }
            }
            List<String> exprs = MonitoringFiles.dashboardExpressions(file);
            assertTrue(exprs.size() >= 20, file + " has " + exprs.size() + " queries");
            for (String expr : exprs) {
                assertNull(MonitoringFiles.bracketProblem(expr), file + ": " + expr);
                assertFalse(MonitoringFiles.seriesNames(expr).isEmpty(), file + " reads none of our series: " + expr);
            }
        }
    }

    @Test
    void series_names_are_read_from_expressions_but_not_from_label_values() {
        assertEquals(Set.of("twofold_http_server_requests_seconds_bucket"), MonitoringFiles.seriesNames(
                "histogram_quantile(0.99, sum by (le) (rate(twofold_http_server_requests_seconds_bucket"
                        + "{route=~\"/v1/twofold_fake\"}[5m])))"));
        assertEquals("an unmatched ')'", MonitoringFiles.bracketProblem("sum(x))"));
        assertEquals("unclosed '('", MonitoringFiles.bracketProblem("sum(rate(x[5m])"));
    }

    private static double threshold(String expr) {
        Matcher m = LAST_THRESHOLD.matcher(expr.lines().reduce((a, b) -> b).orElse(expr).trim());
        assertTrue(m.find(), "no '> number' at the end of: " + expr);
        return Double.parseDouble(m.group(1));
    }
}
