package dev.twofold.service.testing;

import dev.twofold.db.registry.ModelFactors;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.snapshot.IdDirectory;
import dev.twofold.service.model.ServingModel;
import java.util.BitSet;
import java.util.Random;
import java.util.SplittableRandom;

/**
 * A random model where every user and item is known (so serving item index = directory index),
 * with item factors drawn from a few repeated rows to force exact ties. For property tests.
 */
public final class RandomModel {

    public final int users;
    public final int items;
    public final int k;
    public final float mu = 3.2f;
    public final float[] P;
    public final float[] bU;
    public final float[] Q;
    public final float[] bI;
    public final float[] popularity;
    public final int[] ratingUser;
    public final int[] ratingItem;
    public final String[] userIds;
    public final String[] itemIds;
    public final ServingModel model;

    public RandomModel(long seed, int users, int items, int k, int ratingsPerUser) {
        this.users = users;
        this.items = items;
        this.k = k;
        SplittableRandom random = new SplittableRandom(seed);
        P = gaussian(random, users * k, 0.7);
        bU = gaussian(random, users, 0.3);
        int distinctRows = Math.max(1, items / 3);
        float[] rows = gaussian(random, distinctRows * k, 0.7);
        float[] rowBias = gaussian(random, distinctRows, 0.3);
        Q = new float[items * k];
        bI = new float[items];
        popularity = new float[items];
        for (int i = 0; i < items; i++) {
            int row = random.nextInt(distinctRows);
            System.arraycopy(rows, row * k, Q, i * k, k);
            bI[i] = rowBias[row];
            popularity[i] = random.nextInt(20);
        }
        ratingUser = new int[users * ratingsPerUser];
        ratingItem = new int[ratingUser.length];
        for (int u = 0, r = 0; u < users; u++) {
            for (int j = 0; j < ratingsPerUser; j++, r++) {
                ratingUser[r] = u;
                ratingItem[r] = random.nextInt(items);
            }
        }
        userIds = new String[users];
        itemIds = new String[items];
        for (int u = 0; u < users; u++) {
            userIds[u] = "cook-" + u;
        }
        for (int i = 0; i < items; i++) {
            itemIds[i] = "recipe-" + i;
        }
        BitSet knownUsers = new BitSet();
        knownUsers.set(0, users);
        BitSet knownItems = new BitSet();
        knownItems.set(0, items);
        ModelHeader header = KitchenModel.header(11, k, users, items, mu, 1f, 5f);
        ModelFactors factors = new ModelFactors(k, P, bU, knownUsers, Q, bI, popularity, knownItems, null);
        model = ServingModel.assemble(header, factors, new IdDirectory(userIds, itemIds), ratingUser, ratingItem);
    }

    /** r̂ before clamping, in double. */
    public double rawPrediction(int user, int item) {
        double r = (double) mu + bU[user] + bI[item];
        for (int f = 0; f < k; f++) {
            r += (double) P[user * k + f] * Q[item * k + f];
        }
        return r;
    }

    public boolean rated(int user, int item) {
        for (int r = 0; r < ratingUser.length; r++) {
            if (ratingUser[r] == user && ratingItem[r] == item) {
                return true;
            }
        }
        return false;
    }

    private static float[] gaussian(SplittableRandom random, int n, double sd) {
        Random gaussian = new Random(random.nextLong());
        float[] out = new float[n];
        for (int j = 0; j < n; j++) {
            out[j] = (float) (gaussian.nextGaussian() * sd);
        }
        return out;
    }
}
