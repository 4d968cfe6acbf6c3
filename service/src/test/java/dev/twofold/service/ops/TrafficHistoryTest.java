package dev.twofold.service.ops;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.service.scoring.ListCache;
import dev.twofold.service.scoring.Ranker;
import dev.twofold.service.scoring.UserVector;
import dev.twofold.service.testing.RandomModel;
import java.time.Clock;
import java.time.Instant;
import java.util.List;
import java.util.Map;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.Test;

class TrafficHistoryTest {

    private static final double TOLERANCE = 1e-9;
    private static final Instant T0 = Instant.parse("2026-12-01T12:00:00Z");
    private static final String RECOMMENDATIONS = "/v1/users/{user}/recommendations";

    @Test
    void a_sample_holds_the_rates_and_latencies_of_the_requests_between_two_readings() {
        try (ServiceMetrics metrics = new ServiceMetrics(Clock.systemUTC())) {
            TrafficHistory history = new TrafficHistory(10);
            // before the first reading: 3 slow requests, which must not show in the sample
            for (int j = 0; j < 3; j++) {
                metrics.requestFinished("GET", RECOMMENDATIONS, 200, null, TimeUnit.MILLISECONDS.toNanos(900));
            }
            // and user 0's list scored and kept
            ListCache.Stats kept = new ListCache.Stats();
            metrics.trackListCache(kept);
            RandomModel m = new RandomModel(5, 3, 40, 4, 5);
            ListCache lists = new ListCache(m.model.userIndexSpace(), 1 << 20, kept);
            ask(lists, m, 0);
            history.record(T0, metrics.trafficTotals());
            assertTrue(history.samples().isEmpty(), "one reading makes no sample");

            // 100 requests in 10 s: 98 fast ones, one client error, one server error; the health
            // route is not API traffic
            for (int j = 0; j < 98; j++) {
                metrics.requestFinished("GET", RECOMMENDATIONS, 200, null, TimeUnit.MICROSECONDS.toNanos(400));
            }
            metrics.requestFinished("GET", RECOMMENDATIONS, 400, "tag:twofold.dev,2026:problem:invalid-parameter",
                    TimeUnit.MICROSECONDS.toNanos(400));
            metrics.requestFinished("POST", "/v1/predictions", 503, null, TimeUnit.MICROSECONDS.toNanos(400));
            metrics.requestFinished("GET", "/health/ready", 200, null, TimeUnit.SECONDS.toNanos(2));
            for (int j = 0; j < 40; j++) {
                metrics.recommended("model");
            }
            metrics.recommended("popular");
            // kept ranked lists: 3 hits of user 0 and the miss of a new user
            for (int j = 0; j < 3; j++) {
                ask(lists, m, 0);
            }
            ask(lists, m, 1);
            history.record(T0.plusSeconds(10), metrics.trafficTotals());

            List<TrafficHistory.Sample> samples = history.samples();
            assertEquals(1, samples.size());
            TrafficHistory.Sample s = samples.get(0);
            assertEquals(10.0, s.requestsPerSecond(), TOLERANCE);
            assertEquals(0.1, s.clientErrorsPerSecond(), TOLERANCE);
            assertEquals(0.1, s.serverErrorsPerSecond(), TOLERANCE);
            assertEquals(Map.of("model", 4.0, "popular", 0.1), s.strategiesPerSecond());
            assertEquals(0.3, s.keptListHitsPerSecond(), TOLERANCE);
            assertEquals(0.1, s.keptListMissesPerSecond(), TOLERANCE);
            // every request of the interval took 0.4 ms, so every quantile lies in the bucket holding
            // 0.4 ms, and none reaches the 900 ms requests of before or the health route's 2 s
            for (double ms : s.latencyMs()) {
                assertTrue(ms > 0.2 && ms <= 0.5, "quantile " + ms + " ms");
            }
        }
    }

    @Test
    void the_history_keeps_only_the_newest_samples() {
        try (ServiceMetrics metrics = new ServiceMetrics(Clock.systemUTC())) {
            TrafficHistory history = new TrafficHistory(3);
            for (int j = 0; j < 6; j++) {
                metrics.requestFinished("GET", RECOMMENDATIONS, 200, null, 1_000_000);
                history.record(T0.plusSeconds(j), metrics.trafficTotals());
            }
            List<TrafficHistory.Sample> samples = history.samples();
            assertEquals(3, samples.size());
            assertEquals(T0.plusSeconds(3), samples.get(0).at());
            assertEquals(T0.plusSeconds(5), samples.get(2).at());
            assertEquals(1.0, samples.get(2).requestsPerSecond(), TOLERANCE);
        }
    }

    @Test
    void a_reading_right_after_another_is_ignored_rather_than_divided_by_almost_nothing() {
        try (ServiceMetrics metrics = new ServiceMetrics(Clock.systemUTC())) {
            TrafficHistory history = new TrafficHistory(10);
            history.record(T0, metrics.trafficTotals());
            metrics.requestFinished("GET", RECOMMENDATIONS, 200, null, 1_000_000);
            metrics.recommended("model");
            // a timer that fell behind fires twice in a row: the second reading comes 0.2 ms later
            history.record(T0.plusSeconds(1), metrics.trafficTotals());
            history.record(T0.plusSeconds(1).plusNanos(200_000), metrics.trafficTotals());
            List<TrafficHistory.Sample> samples = history.samples();
            assertEquals(1, samples.size());
            assertEquals(1.0, samples.get(0).requestsPerSecond(), TOLERANCE);
            assertEquals(1.0, samples.get(0).strategiesPerSecond().get("model"), TOLERANCE);
        }
    }

    /** Recommendations for user {@code user} of {@code m} through the kept lists. */
    private static void ask(ListCache lists, RandomModel m, int user) {
        int u = m.model.userIndex(m.userIds[user]);
        new Ranker().recommendLater(m.model, UserVector.fromModel(m.model, u), u, 10, List.of(), lists).join();
    }
}
