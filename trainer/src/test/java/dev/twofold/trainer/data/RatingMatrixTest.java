package dev.twofold.trainer.data;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.HashSet;
import java.util.Random;
import java.util.Set;
import org.junit.jupiter.api.Test;

class RatingMatrixTest {

    /** Both orientations together: an int index and a float value each. */
    private static final int MAX_BYTES_PER_RATING = 24;

    @Test
    void both_orientations_hold_the_same_ratings_sorted_by_the_other_index() {
        // users 0..2, items 0..3, given out of order
        int[] u = {2, 0, 1, 0, 2, 0};
        int[] i = {1, 3, 0, 0, 3, 2};
        float[] v = {5, 4, 3, 2, 1, 0.5f};
        RatingMatrix r = RatingMatrix.of(3, 4, u, i, v);
        assertEquals(6, r.nnz());
        assertArrayEquals(new int[] {0, 3, 4, 6}, r.userStart());
        assertArrayEquals(new int[] {0, 2, 3, 0, 1, 3}, r.userItems());
        assertArrayEquals(new float[] {2, 0.5f, 4, 3, 5, 1}, r.userValues());
        assertArrayEquals(new int[] {0, 2, 3, 4, 6}, r.itemStart());
        assertArrayEquals(new int[] {0, 1, 2, 0, 0, 2}, r.itemUsers());
        assertArrayEquals(new float[] {2, 3, 5, 0.5f, 4, 1}, r.itemValues());
        assertEquals(5f, r.get(2, 1));
        assertTrue(Float.isNaN(r.get(1, 1)));
        assertEquals(15.5 / 6, r.mean(), 1e-12);
    }

    @Test
    void a_subset_of_rows_builds_a_matrix_of_only_those_rows() {
        int[] u = {0, 0, 1, 1};
        int[] i = {0, 1, 0, 1};
        float[] v = {1, 2, 3, 4};
        RatingMatrix r = RatingMatrix.of(2, 2, u, i, v, new int[] {1, 2});
        assertEquals(2, r.nnz());
        assertEquals(2f, r.get(0, 1));
        assertEquals(3f, r.get(1, 0));
        assertTrue(Float.isNaN(r.get(0, 0)));
    }

    @Test
    void random_matrix_agrees_between_orientations_and_stays_within_the_memory_budget() {
        Random random = new Random(3);
        int m = 300;
        int n = 200;
        int[] u = new int[5000];
        int[] i = new int[5000];
        float[] v = new float[5000];
        Set<Long> seen = new HashSet<>();
        int nnz = 0;
        while (nnz < 5000) {
            int a = random.nextInt(m);
            int b = random.nextInt(n);
            if (seen.add((long) a * n + b)) {
                u[nnz] = a;
                i[nnz] = b;
                v[nnz] = 1 + random.nextInt(5);
                nnz++;
            }
        }
        RatingMatrix r = RatingMatrix.of(m, n, u, i, v);
        for (int s = 0; s < nnz; s++) {
            assertEquals(v[s], r.get(u[s], i[s]));
        }
        for (int b = 0; b < n; b++) {
            for (int at = r.itemStart()[b]; at < r.itemStart()[b + 1]; at++) {
                assertEquals(r.itemValues()[at], r.get(r.itemUsers()[at], b));
                if (at > r.itemStart()[b]) {
                    assertTrue(r.itemUsers()[at] > r.itemUsers()[at - 1]);
                }
            }
        }
        long pointers = 4L * (m + 1 + n + 1);
        assertTrue(r.footprintBytes() - pointers <= (long) MAX_BYTES_PER_RATING * nnz,
                r.footprintBytes() + " bytes for " + nnz + " ratings");
    }

    @Test
    void refuses_a_repeated_pair_naming_the_user_and_item() {
        IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
                () -> RatingMatrix.of(2, 3, new int[] {1, 0, 1}, new int[] {2, 2, 2}, new float[] {1, 2, 3}));
        assertTrue(e.getMessage().contains("user index 1 and item index 2"), e.getMessage());
    }

    @Test
    void refuses_out_of_range_indices_and_non_finite_values_naming_the_row() {
        IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
                () -> RatingMatrix.of(2, 2, new int[] {0, 2}, new int[] {0, 0}, new float[] {1, 1}));
        assertTrue(e.getMessage().contains("rating row 1: user index 2 outside 0..1"), e.getMessage());
        e = assertThrows(IllegalArgumentException.class,
                () -> RatingMatrix.of(2, 2, new int[] {0, 1}, new int[] {0, 0}, new float[] {1, Float.NaN}));
        assertTrue(e.getMessage().contains("rating row 1: value NaN"), e.getMessage());
    }

    @Test
    void counts_how_many_people_liked_each_item() {
        RatingMatrix r = RatingMatrix.of(3, 2, new int[] {0, 1, 2, 0}, new int[] {0, 0, 0, 1}, new float[] {4, 5, 3, 3.9f});
        assertArrayEquals(new float[] {2, 0}, r.countAtLeast(4f));
    }

    @Test
    void both_orientations_with_their_pointers_take_at_most_24_bytes_per_rating() {
        // 200,000 ratings over 5,000 users and 2,000 items: 16 bytes per rating plus the pointer arrays
        java.util.Random random = new java.util.Random(3);
        int nnz = 200_000;
        int[] u = new int[nnz];
        int[] i = new int[nnz];
        float[] v = new float[nnz];
        java.util.BitSet seen = new java.util.BitSet();
        for (int at = 0; at < nnz; ) {
            int a = random.nextInt(5_000);
            int b = random.nextInt(2_000);
            if (!seen.get(a * 2_000 + b)) {
                seen.set(a * 2_000 + b);
                u[at] = a;
                i[at] = b;
                v[at] = 1 + random.nextInt(5);
                at++;
            }
        }
        RatingMatrix r = RatingMatrix.of(5_000, 2_000, u, i, v);
        double perRating = r.footprintBytes() / (double) r.nnz();
        assertTrue(perRating <= MAX_BYTES_PER_RATING, perRating + " bytes per rating");
        assertEquals(16L * nnz + 4L * (5_001 + 2_001), r.footprintBytes(), "an index and a value per orientation");
    }
}
