package dev.twofold.service.ops;

import java.util.Map;

/**
 * Running totals of API traffic since the service started, read in one pass.
 *
 * @param requests          API requests finished
 * @param clientErrors      of which answered 4xx
 * @param serverErrors      of which answered 5xx
 * @param strategies        recommendation lists served, by strategy
 * @param keptListHits      recommendation requests answered from a kept ranked list
 * @param keptListMisses    recommendation requests a kept list could have answered but were scored (then kept)
 * @param bucketBounds      upper bounds of the latency histogram buckets, seconds, ascending
 * @param cumulativeBuckets requests that took at most each bound (cumulative, like Prometheus {@code le} buckets);
 *                          the rest of {@code requests} took longer than the last bound
 */
record TrafficTotals(long requests, long clientErrors, long serverErrors, Map<String, Long> strategies,
        long keptListHits, long keptListMisses, double[] bucketBounds, long[] cumulativeBuckets) {
}
