package dev.twofold.trainer.split;

import java.util.Arrays;

/**
 * Holds out each user's latest ratings: the model is judged on what users rated after everything it
 * was trained on, as it will be used. A user with n ≥ 2 ratings has h = min(n − 1, max(1,
 * round(fraction·n))) held out: the h latest by time (ties broken by the larger item index, so the
 * split is deterministic); a user with one rating keeps it in training. Cost O(nnz log nnz).
 */
public final class TimeHoldout implements Holdout {

    /** A rating time that was not given (the snapshot's marker). */
    public static final long NO_TIME = Long.MIN_VALUE;

    private final double fraction;

    /** @param fraction share of each user's ratings held out, in [0, 1) */
    public TimeHoldout(double fraction) {
        if (!(fraction >= 0 && fraction < 1)) {
            throw new IllegalArgumentException("holdout fraction " + fraction + " outside [0, 1)");
        }
        this.fraction = fraction;
    }

    public double fraction() {
        return fraction;
    }

    /**
     * @throws IllegalArgumentException when times are missing (null, or a rating without a time),
     *     saying how many ratings have none
     */
    @Override
    public Split split(int numUsers, int[] ratingUser, int[] ratingItem, long[] ratingTime) {
        int rows = ratingUser.length;
        if (ratingTime == null) {
            throw new IllegalArgumentException("a split by time needs rating times, and none were given");
        }
        if (ratingItem.length != rows || ratingTime.length != rows) {
            throw new IllegalArgumentException("rating arrays differ in length: users " + rows + ", items "
                    + ratingItem.length + ", times " + ratingTime.length);
        }
        int missing = 0;
        for (long t : ratingTime) {
            if (t == NO_TIME) {
                missing++;
            }
        }
        if (missing > 0) {
            throw new IllegalArgumentException(missing + " of " + rows + " ratings have no time; a split by time needs "
                    + "a time on every rating (import them with a time column, or use the split by user)");
        }
        int[] start = new int[numUsers + 1];
        for (int p = 0; p < rows; p++) {
            int u = ratingUser[p];
            if (u < 0 || u >= numUsers) {
                throw new IllegalArgumentException("rating row " + p + ": user index " + u + " outside 0.." + (numUsers - 1));
            }
            start[u + 1]++;
        }
        for (int u = 0; u < numUsers; u++) {
            start[u + 1] += start[u];
        }
        int[] byUser = new int[rows];
        int[] fill = Arrays.copyOf(start, numUsers);
        for (int p = 0; p < rows; p++) {
            byUser[fill[ratingUser[p]]++] = p;
        }
        boolean[] heldOut = new boolean[rows];
        for (int u = 0; u < numUsers; u++) {
            int n = start[u + 1] - start[u];
            if (n < 2) {
                continue;
            }
            int h = (int) Math.min(n - 1, Math.max(1, Math.round(fraction * n)));
            if (fraction == 0) {
                h = 0;
            }
            // order the user's rows by (time, item) and hold out the last h
            Integer[] order = new Integer[n];
            for (int j = 0; j < n; j++) {
                order[j] = byUser[start[u] + j];
            }
            Arrays.sort(order, (a, b) -> ratingTime[a] != ratingTime[b] ? Long.compare(ratingTime[a], ratingTime[b])
                    : Integer.compare(ratingItem[a], ratingItem[b]));
            for (int j = n - h; j < n; j++) {
                heldOut[order[j]] = true;
            }
        }
        int test = 0;
        for (boolean b : heldOut) {
            if (b) {
                test++;
            }
        }
        int[] trainRows = new int[rows - test];
        int[] testRows = new int[test];
        for (int p = 0, a = 0, b = 0; p < rows; p++) {
            if (heldOut[p]) {
                testRows[b++] = p;
            } else {
                trainRows[a++] = p;
            }
        }
        return new Split(trainRows, testRows);
    }
}
