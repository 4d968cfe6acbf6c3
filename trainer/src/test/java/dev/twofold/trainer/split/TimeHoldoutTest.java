package dev.twofold.trainer.split;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import org.junit.jupiter.api.Test;

class TimeHoldoutTest {

    @Test
    void each_users_latest_ratings_are_held_out() {
        // user 0 rated items 0..4 at times 50, 10, 40, 20, 30: with 40% the two latest (items 0 and 2) go
        int[] user = {0, 0, 0, 0, 0, 1, 1, 2};
        int[] item = {0, 1, 2, 3, 4, 0, 1, 3};
        long[] time = {50, 10, 40, 20, 30, 7, 5, 9};
        Split split = new TimeHoldout(0.4).split(3, user, item, time);
        // user 1 (two ratings) keeps one and loses its latest (row 5); user 2 keeps its only rating
        assertArrayEquals(new int[] {0, 2, 5}, split.test());
        assertArrayEquals(new int[] {1, 3, 4, 6, 7}, split.train());
    }

    @Test
    void equal_times_are_broken_by_item_so_the_split_is_deterministic() {
        int[] user = {0, 0, 0};
        int[] item = {9, 4, 7};
        long[] time = {1, 1, 1};
        Split split = new TimeHoldout(0.3).split(1, user, item, time);
        assertArrayEquals(new int[] {0}, split.test(), "item 9 counts as the latest");
    }

    @Test
    void refuses_ratings_without_times_and_says_how_many() {
        long none = TimeHoldout.NO_TIME;
        IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
                () -> new TimeHoldout(0.2).split(1, new int[] {0, 0, 0}, new int[] {0, 1, 2}, new long[] {5, none, none}));
        assertTrue(e.getMessage().contains("2 of 3 ratings have no time"), e.getMessage());
    }
}
