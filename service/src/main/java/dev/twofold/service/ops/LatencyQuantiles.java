package dev.twofold.service.ops;

/**
 * Quantiles of a latency histogram given as cumulative bucket counts, estimated the way
 * Prometheus's {@code histogram_quantile} does (documented in the Prometheus query functions
 * reference): find the bucket holding rank q·n and interpolate linearly between its lower and upper
 * bound; the lowest bucket starts at 0; a rank beyond the last finite bound gives that bound.
 * The dashboard and a Prometheus server therefore agree on what "p99" means.
 */
final class LatencyQuantiles {

    private LatencyQuantiles() {
    }

    /**
     * @param q          the quantile, 0..1
     * @param bounds     bucket upper bounds, ascending
     * @param cumulative observations at most each bound (non-decreasing)
     * @param total      all observations, including those above the last bound
     * @return the estimate in the unit of {@code bounds}, or NaN when there are no observations
     */
    static double quantile(double q, double[] bounds, long[] cumulative, long total) {
        if (q < 0 || q > 1 || Double.isNaN(q)) {
            throw new IllegalArgumentException("quantile " + q + " is outside 0..1");
        }
        if (bounds.length != cumulative.length) {
            throw new IllegalArgumentException(bounds.length + " bounds but " + cumulative.length + " counts");
        }
        if (total <= 0 || bounds.length == 0) {
            return Double.NaN;
        }
        double rank = q * total;
        for (int b = 0; b < bounds.length; b++) {
            if (cumulative[b] >= rank && cumulative[b] > 0) {
                double lower = b == 0 ? 0 : bounds[b - 1];
                long below = b == 0 ? 0 : cumulative[b - 1];
                long inBucket = cumulative[b] - below;
                if (inBucket <= 0) {
                    return bounds[b];
                }
                return lower + (bounds[b] - lower) * (rank - below) / inBucket;
            }
        }
        return bounds[bounds.length - 1];
    }
}
