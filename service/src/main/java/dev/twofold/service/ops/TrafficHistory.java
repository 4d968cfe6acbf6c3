package dev.twofold.service.ops;

import java.time.Duration;
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

    /** Shortest interval a sample may cover. */
    static final long MIN_SAMPLE_MS = 50;
    /** Quantiles the dashboard shows. */
    static final double[] QUANTILES = {0.50, 0.95, 0.99};

    /**
     * API traffic over one interval ending at {@code at}.
     *
     * @param latencyMs p50, p95, p99 in milliseconds ({@link #QUANTILES}); NaN when no request finished
     * @param keptListHitsPerSecond   recommendation requests answered from kept ranked lists
     * @param keptListMissesPerSecond recommendation requests kept lists could have answered but were scored
     */
    record Sample(Instant at, double seconds, double requestsPerSecond, double clientErrorsPerSecond,
            double serverErrorsPerSecond, double[] latencyMs, Map<String, Double> strategiesPerSecond,
            double keptListHitsPerSecond, double keptListMissesPerSecond) {

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

    /**
     * Takes a reading; from the second on, adds the sample since the previous one. A reading less
     * than {@link #MIN_SAMPLE_MS} after the previous one is ignored (a late timer catching up
     * would otherwise divide by almost nothing).
     */
    synchronized void record(Instant at, TrafficTotals now) {
        if (lastAt != null && Duration.between(lastAt, at).toMillis() < MIN_SAMPLE_MS) {
            return;
        }
        if (last != null) {
            double seconds = Duration.between(lastAt, at).toNanos() / 1e9;
            long requests = now.requests() - last.requests();
            double[] latency = new double[QUANTILES.length];
            long[] delta = delta(last.cumulativeBuckets(), now.cumulativeBuckets());
            // Quantiles over the requests the buckets hold (up to the histogram's ceiling), not over
            // the request count: a timer's count and buckets are separate counters, and a reading
            // taken while a request is between the two would otherwise look like a request slower
            // than the ceiling and turn p99 of a quiet interval into the ceiling.
            long inBuckets = delta.length == 0 ? 0 : delta[delta.length - 1];
            for (int j = 0; j < QUANTILES.length; j++) {
                latency[j] = LatencyQuantiles.quantile(QUANTILES[j], now.bucketBounds(), delta, inBuckets) * 1000.0;
            }
            Map<String, Double> strategies = new LinkedHashMap<>();
            for (Map.Entry<String, Long> e : now.strategies().entrySet()) {
                long before = last.strategies().getOrDefault(e.getKey(), 0L);
                strategies.put(e.getKey(), (e.getValue() - before) / seconds);
            }
            samples.addLast(new Sample(at, seconds, requests / seconds,
                    (now.clientErrors() - last.clientErrors()) / seconds,
                    (now.serverErrors() - last.serverErrors()) / seconds, latency,
                    Collections.unmodifiableMap(strategies), (now.keptListHits() - last.keptListHits()) / seconds,
                    (now.keptListMisses() - last.keptListMisses()) / seconds));
            while (samples.size() > capacity) {
                samples.removeFirst();
            }
        }
        last = now;
        lastAt = at;
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
