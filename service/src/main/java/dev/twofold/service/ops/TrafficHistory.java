package dev.twofold.service.ops;

import java.time.Instant;
import java.util.ArrayDeque;
import java.util.ArrayList;
import java.util.Collections;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * The recent API traffic the dashboard draws: the running {@link TrafficTotals} are read every
 * interval, and each reading minus the one before becomes a {@link Sample} (rates per second and
 * latency quantiles of the requests that finished in between). Holds the newest
 * {@code capacity} samples. Thread-safe.
 */
final class TrafficHistory {

    /** Quantiles the dashboard shows. */
    static final double[] QUANTILES = {0.50, 0.95, 0.99};

    /**
     * API traffic over one interval ending at {@code at}.
     *
     * @param latencyMs p50, p95, p99 in milliseconds ({@link #QUANTILES}); NaN when no request finished
     */
    record Sample(Instant at, double seconds, double requestsPerSecond, double clientErrorsPerSecond,
            double serverErrorsPerSecond, double[] latencyMs, Map<String, Double> strategiesPerSecond) {

        long requests() {
            return Math.round(requestsPerSecond * seconds);
        }
    }

    private final int capacity;
    private final ArrayDeque<Sample> samples = new ArrayDeque<>();
    private Instant lastAt;
    private TrafficTotals last;

    TrafficHistory(int capacity) {
        if (capacity < 1) {
            throw new IllegalArgumentException("traffic history capacity " + capacity + " must be at least 1");
        }
        this.capacity = capacity;
    }

    /** Takes a reading; from the second on, adds the sample since the previous one. */
    synchronized void record(Instant at, TrafficTotals now) {
        if (last != null && at.isAfter(lastAt)) {
            double seconds = (at.toEpochMilli() - lastAt.toEpochMilli()) / 1000.0;
            long requests = now.requests() - last.requests();
            double[] latency = new double[QUANTILES.length];
            long[] delta = delta(last.cumulativeBuckets(), now.cumulativeBuckets());
            for (int j = 0; j < QUANTILES.length; j++) {
                latency[j] = LatencyQuantiles.quantile(QUANTILES[j], now.bucketBounds(), delta, requests) * 1000.0;
            }
            Map<String, Double> strategies = new LinkedHashMap<>();
            for (Map.Entry<String, Long> e : now.strategies().entrySet()) {
                long before = last.strategies().getOrDefault(e.getKey(), 0L);
                strategies.put(e.getKey(), (e.getValue() - before) / seconds);
            }
            samples.addLast(new Sample(at, seconds, requests / seconds,
                    (now.clientErrors() - last.clientErrors()) / seconds,
                    (now.serverErrors() - last.serverErrors()) / seconds, latency,
                    Collections.unmodifiableMap(strategies)));
            while (samples.size() > capacity) {
                samples.removeFirst();
            }
        }
        if (lastAt == null || at.isAfter(lastAt)) {
            last = now;
            lastAt = at;
        }
    }

    /** The samples, oldest first. */
    synchronized List<Sample> samples() {
        return new ArrayList<>(samples);
    }

    /** Buckets that appeared since the earlier reading (histograms of new routes) count from zero. */
    private static long[] delta(long[] before, long[] after) {
        long[] out = new long[after.length];
        for (int b = 0; b < after.length; b++) {
            out[b] = after[b] - (b < before.length ? before[b] : 0);
        }
        return out;
    }
}
