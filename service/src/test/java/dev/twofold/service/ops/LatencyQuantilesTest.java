package dev.twofold.service.ops;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import org.junit.jupiter.api.Test;

class LatencyQuantilesTest {

    /** Interpolated values are exact in binary here up to rounding of one division. */
    private static final double TOLERANCE = 1e-12;
    /** Bounds 1, 2, 4, 8 (ms); 10 observations: 2 at most 1, 5 at most 2, 9 at most 4, 10 at most 8. */
    private static final double[] BOUNDS = {1, 2, 4, 8};
    private static final long[] CUMULATIVE = {2, 5, 9, 10};

    // Expected values follow the histogram_quantile rule of the Prometheus documentation (query
    // functions): rank = q * count; in the bucket (lower, upper] holding it,
    // lower + (upper - lower) * (rank - count below) / count in bucket; the first bucket starts at 0.

    @Test
    void the_median_interpolates_inside_the_bucket_that_holds_its_rank() {
        // rank 5 is the last observation of (1, 2]: 1 + 1 * (5 - 2) / 3 = 2
        assertEquals(2.0, LatencyQuantiles.quantile(0.5, BOUNDS, CUMULATIVE, 10), TOLERANCE);
        // rank 7 lies in (2, 4]: 2 + 2 * (7 - 5) / 4 = 3
        assertEquals(3.0, LatencyQuantiles.quantile(0.7, BOUNDS, CUMULATIVE, 10), TOLERANCE);
    }

    @Test
    void the_lowest_bucket_starts_at_zero() {
        // rank 1 of 2 in (0, 1]: 0.5
        assertEquals(0.5, LatencyQuantiles.quantile(0.1, BOUNDS, CUMULATIVE, 10), TOLERANCE);
    }

    @Test
    void a_rank_beyond_the_last_bound_gives_that_bound() {
        // 10 observations within the bounds and 10 above: the 0.99 rank (19.8) is above 8
        assertEquals(8.0, LatencyQuantiles.quantile(0.99, BOUNDS, CUMULATIVE, 20), TOLERANCE);
    }

    @Test
    void no_observations_give_no_estimate_and_bad_input_is_refused() {
        assertTrue(Double.isNaN(LatencyQuantiles.quantile(0.5, BOUNDS, new long[4], 0)));
        assertThrows(IllegalArgumentException.class, () -> LatencyQuantiles.quantile(1.5, BOUNDS, CUMULATIVE, 10));
        assertThrows(IllegalArgumentException.class, () -> LatencyQuantiles.quantile(0.5, BOUNDS, new long[3], 10));
    }
}
