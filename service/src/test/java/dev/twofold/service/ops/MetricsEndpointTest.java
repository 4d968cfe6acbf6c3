package dev.twofold.service.ops;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.registry.ModelRegistry;
import java.net.http.HttpResponse;
import java.nio.file.Path;
import java.time.Duration;
import java.time.Instant;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.TreeSet;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** {@code GET /metrics} of a service on a real PostgreSQL with a real retrain history, after real traffic. */
class MetricsEndpointTest {

    private static final ObjectMapper JSON = new ObjectMapper();
    private static final String RECOMMENDATIONS = "/v1/users/{user}/recommendations";
    private static final String REQUESTS = "twofold_http_server_requests_seconds";
    /** Figures pass through a double gauge unchanged; the text format prints them in full. */
    private static final double SAME = 1e-12;
    private static final int KNOWN_COOKS = 12;

    @TempDir
    static Path dir;
    private static TrainedCommunity community;
    private static TrainedCommunity.Traffic sent;
    private static PrometheusText metrics;
    private static HttpResponse<String> scrape;

    @BeforeAll
    static void serveTrafficAndScrape() throws InterruptedException {
        community = TrainedCommunity.start(dir, OpsSettings.defaults().withHistoryRefresh(Duration.ofMillis(200)));
        sent = community.sendTraffic(KNOWN_COOKS);
        long deadline = System.nanoTime() + TrainedCommunity.WAIT.toNanos();
        do {
            scrape = community.api.get("/metrics");
            metrics = PrometheusText.parse(scrape.body());
            // the history is read every 200 ms: wait for a reading taken after the broken retrain ended
            // (its version counted and the newest outcome failed) before judging the gauges
            if (!metrics.samples("twofold_retrain_versions", s -> PrometheusText.hasLabels(s, "status", "failed")
                    && s.value() == 1).isEmpty()
                    && !metrics.samples("twofold_retrain_last_outcome", s -> PrometheusText.hasLabels(s, "outcome",
                            "failed") && s.value() == 1).isEmpty()) {
                break;
            }
            Thread.sleep(100);
        } while (System.nanoTime() < deadline);
    }

    @AfterAll
    static void stop() {
        if (community != null) {
            community.close();
        }
    }

    @Test
    void the_exposition_is_strict_prometheus_text_with_its_content_type() {
        assertEquals(200, scrape.statusCode());
        assertEquals(ServiceMetrics.CONTENT_TYPE, scrape.headers().firstValue("Content-Type").orElseThrow());
        // parsing above already enforced the format; every family of ours is typed and explained
        for (PrometheusText.Family f : metrics.families().values()) {
            if (f.name().startsWith("twofold_")) {
                assertNotEquals("untyped", f.type(), f.name());
                assertTrue(f.help() != null && !f.help().isBlank(), "no HELP for " + f.name());
            }
        }
    }

    @Test
    void requests_are_counted_and_timed_per_route_template_and_status_never_per_raw_path() {
        assertEquals(sent.servedRecommendations(),
                metrics.value(REQUESTS + "_count", "method", "GET", "route", RECOMMENDATIONS, "status", "200"));
        assertEquals(sent.badRequests(),
                metrics.value(REQUESTS + "_count", "method", "GET", "route", RECOMMENDATIONS, "status", "400"));
        assertEquals(sent.predictions(),
                metrics.value(REQUESTS + "_count", "method", "POST", "route", "/v1/predictions", "status", "200"));
        assertEquals(sent.notFound(), metrics.value(REQUESTS + "_count", "route", ServiceMetrics.UNMATCHED_ROUTE,
                "status", "404"));

        Set<String> routes = new TreeSet<>();
        for (PrometheusText.Sample s : metrics.samples(REQUESTS + "_count")) {
            routes.add(s.label("route"));
        }
        for (String route : routes) {
            assertTrue(route.equals(ServiceMetrics.UNMATCHED_ROUTE) || route.startsWith("/"), route);
            for (String cook : community.cooks.subList(0, KNOWN_COOKS)) {
                assertFalse(route.contains(cook), "a raw path became a route label: " + route);
            }
        }
        // the latency target is a bucket bound, so "share over 10 ms" is exact in PromQL
        assertEquals(1, metrics.samples(REQUESTS + "_bucket", s -> PrometheusText.hasLabels(s, "route",
                RECOMMENDATIONS, "status", "200", "le", "0.01")).size());
        double sum = metrics.value(REQUESTS + "_sum", "method", "GET", "route", RECOMMENDATIONS, "status", "200");
        assertTrue(sum > 0, "time spent in the recommendation route: " + sum);
    }

    @Test
    void errors_are_counted_by_problem_type() {
        assertEquals(sent.badRequests(), metrics.value("twofold_http_server_problems_total",
                "type", "invalid-parameter", "status", "400"));
        assertEquals(sent.notFound(), metrics.value("twofold_http_server_problems_total",
                "type", "not-found", "status", "404"));
    }

    @Test
    void refused_keys_are_counted_by_reason_and_the_database_is_reported_up() {
        assertEquals(sent.withoutKey(), metrics.value("twofold_auth_refusals_total", "reason", "missing"));
        assertEquals(sent.withUnknownKey(), metrics.value("twofold_auth_refusals_total", "reason", "invalid"));
        assertEquals(sent.withoutKey() + sent.withUnknownKey(), metrics.value("twofold_http_server_problems_total",
                "type", "unauthorized", "status", "401"));
        assertEquals(1, metrics.value("twofold_database_up"));
    }

    @Test
    void kept_list_lookups_are_counted_by_outcome() {
        // only known cooks asked for short lists can be answered from kept lists: newcomers, the
        // follower (folded in) and the refused requests count as neither
        assertEquals(sent.keptListHits(), metrics.value("twofold_list_cache_lookups_total", "outcome", "hit"));
        assertEquals(sent.keptListMisses(), metrics.value("twofold_list_cache_lookups_total", "outcome", "miss"));
    }

    @Test
    void recommendations_are_counted_by_the_strategy_the_response_carried() {
        assertEquals(sent.modelRecommendations(), metrics.value("twofold_recommendations_total", "strategy", "model"));
        assertEquals(sent.popularRecommendations(), metrics.value("twofold_recommendations_total",
                "strategy", "popular"));
        assertEquals(sent.trustRecommendations(), metrics.value("twofold_recommendations_total", "strategy", "trust"));
    }

    @Test
    void users_folded_in_after_a_write_are_counted() {
        assertTrue(sent.foldedUsers() > 0, "the write folded nobody in");
        assertEquals(sent.foldedUsers(), metrics.value("twofold_fold_ins_total"));
    }

    @Test
    void the_live_model_gauges_carry_its_id_age_and_the_figures_the_trainer_stored() throws Exception {
        ModelHeader live = new ModelRegistry(community.database).find(community.liveModel).orElseThrow();
        JsonNode stored = JSON.readTree(live.metricsJson());
        assertEquals(1, metrics.value("twofold_model_loaded"));
        assertEquals(community.liveModel, metrics.value("twofold_model_id"));
        assertEquals(stored.at("/model/overall/rmse").asDouble(), metrics.value("twofold_model_heldout_rmse",
                "segment", "overall"), SAME);
        assertEquals(stored.at("/model/cold/rmse").asDouble(), metrics.value("twofold_model_heldout_rmse",
                "segment", "cold"), SAME);
        assertEquals(stored.at("/model/overall/precision").asDouble(),
                metrics.value("twofold_model_heldout_precision_at_k", "segment", "overall"), SAME);
        assertEquals(stored.at("/model/overall/coverage").asDouble(), metrics.value("twofold_model_heldout_coverage"),
                SAME);
        assertEquals(stored.at("/k").asInt(), metrics.value("twofold_model_heldout_k"));
        assertEquals(stored.at("/baselines/globalMean/overall/rmse").asDouble(),
                metrics.value("twofold_model_baseline_rmse", "baseline", "global_mean"), SAME);
        assertEquals(live.finishedAt().toEpochMilli() / 1000.0, metrics.value("twofold_model_trained_timestamp_seconds"),
                SAME);
        double age = metrics.value("twofold_model_age_seconds");
        double sinceTraining = Duration.between(live.finishedAt(), Instant.now()).toMillis() / 1000.0;
        assertTrue(age >= 0 && age <= sinceTraining + 1, "age " + age + " s, trained " + sinceTraining + " s ago");
    }

    @Test
    void a_model_swap_is_counted_and_timed_but_the_first_load_is_not() {
        assertEquals(1, metrics.value("twofold_model_swap_seconds_count"));
        assertTrue(metrics.value("twofold_model_swap_seconds_sum") >= 0);
    }

    @Test
    void retrain_outcomes_and_times_come_from_the_model_registry() throws Exception {
        ModelRegistry registry = new ModelRegistry(community.database);
        for (String[] expected : List.of(new String[] {"active", "1"}, new String[] {"retired", "1"},
                new String[] {"rejected", "1"}, new String[] {"failed", "1"}, new String[] {"training", "0"},
                new String[] {"candidate", "0"})) {
            assertEquals(Double.parseDouble(expected[1]), metrics.value("twofold_retrain_versions", "status",
                    expected[0]), expected[0]);
        }
        assertEquals(1, metrics.value("twofold_retrain_last_outcome", "outcome", "failed"));
        assertEquals(0, metrics.value("twofold_retrain_last_outcome", "outcome", "promoted"));

        ModelHeader live = registry.find(community.liveModel).orElseThrow();
        ModelHeader failed = registry.find(community.failedModel).orElseThrow();
        assertEquals(live.finishedAt().toEpochMilli() / 1000.0,
                metrics.value("twofold_retrain_last_success_timestamp_seconds"), SAME);
        Instant failedAt = failed.finishedAt() != null ? failed.finishedAt() : failed.createdAt();
        assertEquals(failedAt.toEpochMilli() / 1000.0, metrics.value("twofold_retrain_last_failure_timestamp_seconds"),
                SAME);
        assertEquals(failed.createdAt().toEpochMilli() / 1000.0,
                metrics.value("twofold_retrain_last_started_timestamp_seconds"), SAME);

        JsonNode comparison = JSON.readTree(live.metricsJson()).get("comparison");
        assertEquals(comparison.get("candidateRmse").asDouble(), metrics.value("twofold_retrain_last_candidate_rmse"),
                SAME);
        assertEquals(comparison.get("activeRmse").asDouble(), metrics.value("twofold_retrain_last_reference_rmse"),
                SAME);
        JsonNode first = JSON.readTree(registry.find(community.firstModel).orElseThrow().metricsJson());
        assertEquals(first.at("/model/overall/rmse").asDouble(), metrics.value("twofold_model_previous_heldout_rmse"),
                SAME);
        assertTrue(metrics.value("twofold_retrain_history_age_seconds") >= 0);
        assertEquals(0, metrics.value("twofold_retrain_history_read_failures_total"));
    }

    @Test
    void the_connection_pool_the_jvm_and_the_process_are_measured_too() {
        Set<String> names = metrics.sampleNames();
        for (String name : List.of("hikaricp_connections", "hikaricp_connections_active", "hikaricp_connections_max",
                "hikaricp_connections_acquire_seconds_count", "jvm_memory_used_bytes", "jvm_threads_live_threads",
                "jvm_classes_loaded_classes", "process_cpu_usage", "process_uptime_seconds", "system_cpu_count",
                "process_files_open_files")) {
            assertTrue(names.contains(name), name + " is missing");
        }
        assertTrue(metrics.value("hikaricp_connections_acquire_seconds_count") > 0, "no connection was ever borrowed");
    }

    @Test
    void every_series_the_alert_rules_and_dashboards_read_is_exposed() {
        Set<String> exposed = metrics.sampleNames();
        Map<String, String> used = new java.util.TreeMap<>();
        MonitoringFiles.alertExpressions().forEach((alert, expr) ->
                MonitoringFiles.seriesNames(expr).forEach(name -> used.put(name, "alert " + alert)));
        for (Path dashboard : MonitoringFiles.dashboards()) {
            for (String expr : MonitoringFiles.dashboardExpressions(dashboard)) {
                MonitoringFiles.seriesNames(expr).forEach(name -> used.put(name, dashboard.getFileName().toString()));
            }
        }
        assertTrue(used.size() >= 25, "only " + used.keySet());
        used.forEach((name, where) -> assertTrue(exposed.contains(name), where + " reads " + name
                + ", which /metrics does not expose"));
    }

    @Test
    void a_second_operator_view_on_the_same_pool_starts_without_the_pool_series() {
        try (Observability second = new Observability(OpsSettings.defaults(), community.database,
                java.time.Clock.systemUTC())) {
            PrometheusText own = PrometheusText.parse(new String(second.metrics().scrape(),
                    java.nio.charset.StandardCharsets.UTF_8));
            assertTrue(own.sampleNames().stream().noneMatch(n -> n.startsWith("hikaricp_")));
            assertTrue(own.sampleNames().contains("twofold_retrain_versions"));
        }
    }
}
