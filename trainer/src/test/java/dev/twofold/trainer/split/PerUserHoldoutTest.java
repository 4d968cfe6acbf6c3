package dev.twofold.trainer.split;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Arrays;
import java.util.Random;
import org.junit.jupiter.api.Test;

class PerUserHoldoutTest {

    /** 20,000 Bernoulli(0.2) draws: the share's standard error is 0.003; allow five of them. */
    private static final double SHARE_TOLERANCE = 0.015;

    @Test
    void holds_out_about_the_requested_share_and_every_row_lands_in_exactly_one_side() {
        int users = 400;
        int per = 50;
        int[] u = new int[users * per];
        int[] i = new int[users * per];
        for (int a = 0, at = 0; a < users; a++) {
            for (int b = 0; b < per; b++, at++) {
                u[at] = a;
                i[at] = b * 7 + a % 7;
            }
        }
        Split split = new PerUserHoldout(0.2, 1).split(users, u, i, null);
        assertEquals(u.length, split.train().length + split.test().length);
        assertEquals(0.2, split.test().length / (double) u.length, SHARE_TOLERANCE);
        int[] all = new int[u.length];
        System.arraycopy(split.train(), 0, all, 0, split.train().length);
        System.arraycopy(split.test(), 0, all, split.train().length, split.test().length);
        Arrays.sort(all);
        for (int p = 0; p < all.length; p++) {
            assertEquals(p, all[p]);
        }
    }

    @Test
    void every_user_keeps_a_training_rating_and_a_single_rating_is_never_held_out() {
        Random random = new Random(5);
        int users = 3000;
        int[] u = new int[users * 3];
        int[] i = new int[users * 3];
        int rows = 0;
        for (int a = 0; a < users; a++) {
            int count = 1 + a % 3;
            for (int b = 0; b < count; b++) {
                u[rows] = a;
                i[rows] = b + random.nextInt(1000) * 3;
                rows++;
            }
        }
        u = Arrays.copyOf(u, rows);
        i = Arrays.copyOf(i, rows);
        // a large fraction makes "all held out" common, so the guard is exercised
        Split split = new PerUserHoldout(0.9, 2).split(users, u, i, null);
        int[] kept = new int[users];
        for (int p : split.train()) {
            kept[u[p]]++;
        }
        for (int a = 0; a < users; a++) {
            assertTrue(kept[a] >= 1, "user " + a + " keeps a training rating");
        }
        for (int p : split.test()) {
            assertTrue(u[p] % 3 != 0, "a user with one rating keeps it in training");
        }
    }

    @Test
    void same_seed_same_split_and_a_held_out_rating_stays_held_out_when_rows_are_added() {
        int[] u = {0, 0, 0, 0, 0, 1, 1, 1, 1, 1, 1, 1};
        int[] i = {0, 1, 2, 3, 4, 0, 1, 2, 3, 4, 5, 6};
        PerUserHoldout rule = new PerUserHoldout(0.3, 77);
        Split first = rule.split(2, u, i, null);
        assertArrayEquals(first.test(), rule.split(2, u, i, null).test());

        // the same ratings with new rows interleaved, shifted by one position each
        int[] u2 = new int[u.length * 2];
        int[] i2 = new int[u.length * 2];
        for (int p = 0; p < u.length; p++) {
            u2[2 * p] = u[p];
            i2[2 * p] = i[p];
            u2[2 * p + 1] = u[p];
            i2[2 * p + 1] = 100 + p;
        }
        Split later = rule.split(2, u2, i2, null);
        for (int p : first.test()) {
            assertTrue(Arrays.binarySearch(later.test(), 2 * p) >= 0, "row " + p + " stays held out");
        }
    }

    @Test
    void refuses_a_fraction_outside_zero_to_one() {
        IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> new PerUserHoldout(1.0, 1));
        assertTrue(e.getMessage().contains("holdout fraction 1.0 outside [0, 1)"));
    }
}
