package dev.twofold.trainer.split;

import java.util.Arrays;

/**
 * Holds out about {@code fraction} of each user's ratings, chosen by a seeded hash.
 *
 * <p>A rating (u, i) is held out when {@code hash(seed, u, i)}, read as a number in [0, 1), is below
 * {@code fraction}. So the choice depends only on the pair and the seed, not on which other rows
 * exist: a rating held out today stays held out in the next retrain with the same seed. That keeps
 * the comparison of a new model with the live one fair, because the live model was not trained on
 * the rows it is judged on. Every user keeps at least one rating in training: a user with a single
 * rating keeps it, and when the hash would hold out all of a user's ratings, the one with the
 * largest hash goes back to training. Cost O(nnz + numUsers).
 */
public final class PerUserHoldout implements Holdout {

    public static final double DEFAULT_FRACTION = 0.2;

    private final double fraction;
    private final long seed;

    /**
     * @param fraction expected share of each user's ratings held out, in [0, 1)
     * @param seed     chooses which ratings
     */
    public PerUserHoldout(double fraction, long seed) {
        if (!(fraction >= 0 && fraction < 1)) {
            throw new IllegalArgumentException("holdout fraction " + fraction + " outside [0, 1)");
        }
        this.fraction = fraction;
        this.seed = seed;
    }

    public double fraction() {
        return fraction;
    }

    public long seed() {
        return seed;
    }

    @Override
    public Split split(int numUsers, int[] ratingUser, int[] ratingItem, long[] ratingTime) {
        if (ratingUser.length != ratingItem.length) {
            throw new IllegalArgumentException("rating arrays differ in length: users " + ratingUser.length + ", items "
                    + ratingItem.length);
        }
        int rows = ratingUser.length;
        int[] kept = new int[numUsers];
        int[] count = new int[numUsers];
        int[] largestHeldOut = new int[numUsers];
        double[] largestHash = new double[numUsers];
        Arrays.fill(largestHeldOut, -1);
        boolean[] heldOut = new boolean[rows];
        for (int p = 0; p < rows; p++) {
            int u = ratingUser[p];
            if (u < 0 || u >= numUsers) {
                throw new IllegalArgumentException("rating row " + p + ": user index " + u + " outside 0.." + (numUsers - 1));
            }
            count[u]++;
        }
        for (int p = 0; p < rows; p++) {
            int u = ratingUser[p];
            double h = uniform(seed, u, ratingItem[p]);
            if (count[u] >= 2 && h < fraction) {
                heldOut[p] = true;
                if (largestHeldOut[u] < 0 || h > largestHash[u]) {
                    largestHeldOut[u] = p;
                    largestHash[u] = h;
                }
            } else {
                kept[u]++;
            }
        }
        int testRows = 0;
        for (int u = 0; u < numUsers; u++) {
            if (kept[u] == 0 && largestHeldOut[u] >= 0) {
                heldOut[largestHeldOut[u]] = false;
            }
        }
        for (boolean h : heldOut) {
            if (h) {
                testRows++;
            }
        }
        int[] train = new int[rows - testRows];
        int[] test = new int[testRows];
        int a = 0;
        int b = 0;
        for (int p = 0; p < rows; p++) {
            if (heldOut[p]) {
                test[b++] = p;
            } else {
                train[a++] = p;
            }
        }
        return new Split(train, test);
    }

    /** A number in [0, 1) from the pair and the seed (SplitMix64 finaliser over the three). */
    static double uniform(long seed, int user, int item) {
        long z = seed + 0x9E3779B97F4A7C15L * (1 + (((long) user << 32) ^ (item & 0xFFFFFFFFL)));
        z = mix(z);
        z = mix(z ^ user * 0xC2B2AE3D27D4EB4FL ^ item);
        return (z >>> 11) * 0x1.0p-53;
    }

    private static long mix(long z) {
        z = (z ^ (z >>> 30)) * 0xBF58476D1CE4E5B9L;
        z = (z ^ (z >>> 27)) * 0x94D049BB133111EBL;
        return z ^ (z >>> 31);
    }
}
