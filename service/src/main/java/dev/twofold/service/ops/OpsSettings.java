package dev.twofold.service.ops;

import java.time.Duration;

/**
 * How often the operator's view refreshes itself, and the targets it judges health by. The
 * targets are the same numbers as the alert rules in {@code deploy/prometheus/alerts.yml} (a test
 * keeps them equal).
 *
 * @param trafficInterval  how often API traffic is sampled for the dashboard (also how often the page refreshes)
 * @param trafficSamples   samples kept (the dashboard's traffic window is {@code trafficInterval × trafficSamples})
 * @param historyRefresh   how often the model registry is read for the retrain history
 * @param historyVersions  newest model versions the dashboard shows
 */
public record OpsSettings(Duration trafficInterval, int trafficSamples, Duration historyRefresh, int historyVersions) {

    public static final long DEFAULT_TRAFFIC_INTERVAL_MS = 5_000;
    public static final int DEFAULT_TRAFFIC_SAMPLES = 180;
    public static final long DEFAULT_HISTORY_REFRESH_MS = 30_000;
    public static final int DEFAULT_HISTORY_VERSIONS = 30;
    public static final long MIN_INTERVAL_MS = 100;
    public static final int MAX_TRAFFIC_SAMPLES = 10_000;
    public static final int MAX_HISTORY_VERSIONS = 1_000;

    /** p99 latency target of the API. */
    public static final double LATENCY_TARGET_MS = ServiceMetrics.LATENCY_TARGET.toMillis();
    /** Share of API requests that may fail with a server error (5xx). */
    public static final double SERVER_ERROR_RATE_LIMIT = 0.01;
    /** A live model older than this is stale. */
    public static final Duration MODEL_AGE_LIMIT = Duration.ofDays(7);
    /** A retrain is missing when none succeeded for this long (a daily schedule plus slack). */
    public static final Duration RETRAIN_MISSING_AFTER = Duration.ofHours(26);

    public OpsSettings {
        if (trafficInterval == null || trafficInterval.toMillis() < MIN_INTERVAL_MS) {
            throw new IllegalArgumentException("traffic sampling interval " + trafficInterval + " must be at least "
                    + MIN_INTERVAL_MS + " ms");
        }
        if (trafficSamples < 2 || trafficSamples > MAX_TRAFFIC_SAMPLES) {
            throw new IllegalArgumentException("traffic samples " + trafficSamples + " is outside 2.."
                    + MAX_TRAFFIC_SAMPLES);
        }
        if (historyRefresh == null || historyRefresh.toMillis() < MIN_INTERVAL_MS) {
            throw new IllegalArgumentException("retrain history refresh " + historyRefresh + " must be at least "
                    + MIN_INTERVAL_MS + " ms");
        }
        if (historyVersions < 1 || historyVersions > MAX_HISTORY_VERSIONS) {
            throw new IllegalArgumentException("history versions " + historyVersions + " is outside 1.."
                    + MAX_HISTORY_VERSIONS);
        }
    }

    public static OpsSettings defaults() {
        return new OpsSettings(Duration.ofMillis(DEFAULT_TRAFFIC_INTERVAL_MS), DEFAULT_TRAFFIC_SAMPLES,
                Duration.ofMillis(DEFAULT_HISTORY_REFRESH_MS), DEFAULT_HISTORY_VERSIONS);
    }

    public OpsSettings withTrafficInterval(Duration value) {
        return new OpsSettings(value, trafficSamples, historyRefresh, historyVersions);
    }

    public OpsSettings withHistoryRefresh(Duration value) {
        return new OpsSettings(trafficInterval, trafficSamples, value, historyVersions);
    }
}
