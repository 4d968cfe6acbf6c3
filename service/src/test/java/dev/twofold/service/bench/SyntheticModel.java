package dev.twofold.service.bench;

import dev.twofold.db.registry.ModelFactors;
import dev.twofold.db.snapshot.IdDirectory;
import dev.twofold.service.model.ServingModel;
import dev.twofold.service.testing.KitchenModel;
import java.util.BitSet;
import java.util.SplittableRandom;

/**
 * The made-up models the serving benchmarks run on: cooks {@code cook-N} and recipes
 * {@code recipe-N}, every one known to the model, factors uniform in [-0.5, 0.5), {@code perUser}
 * random rated recipes per cook. Only for measuring; nothing here is a realistic model.
 */
public final class SyntheticModel {

    private SyntheticModel() {
    }

    /**
     * @param itemBias    draw item biases uniform in [-0.5, 0.5) (else all zero)
     * @param trustFactors draw trust factors Z (small, uniform in [-0.05, 0.05)) as the shared coupling has
     */
    public static ServingModel build(int users, int items, int k, int perUser, long seed, boolean itemBias,
            boolean trustFactors) {
        SplittableRandom random = new SplittableRandom(seed);
        float[] P = uniform(random, users * k, 1f);
        float[] Q = uniform(random, items * k, 1f);
        float[] bU = new float[users];
        float[] bI = new float[items];
        float[] popularity = new float[items];
        for (int i = 0; i < items; i++) {
            if (itemBias) {
                bI[i] = (float) (random.nextDouble() - 0.5);
            }
            popularity[i] = random.nextInt(1000);
        }
        String[] userIds = new String[users];
        String[] itemIds = new String[items];
        for (int u = 0; u < users; u++) {
            userIds[u] = "cook-" + u;
        }
        for (int i = 0; i < items; i++) {
            itemIds[i] = "recipe-" + i;
        }
        int[] ratingUser = new int[users * perUser];
        int[] ratingItem = new int[ratingUser.length];
        for (int r = 0; r < ratingUser.length; r++) {
            ratingUser[r] = r / perUser;
            ratingItem[r] = random.nextInt(items);
        }
        BitSet knownUsers = new BitSet(users);
        knownUsers.set(0, users);
        BitSet knownItems = new BitSet(items);
        knownItems.set(0, items);
        float[] Z = trustFactors ? uniform(random, users * k, 0.1f) : null;
        ModelFactors factors = new ModelFactors(k, P, bU, knownUsers, Q, bI, popularity, knownItems, Z);
        return ServingModel.assemble(KitchenModel.header(1, k, users, items, 3.5f, 1f, 5f), factors,
                new IdDirectory(userIds, itemIds), ratingUser, ratingItem);
    }

    private static float[] uniform(SplittableRandom random, int n, float scale) {
        float[] out = new float[n];
        for (int j = 0; j < n; j++) {
            out[j] = (float) (random.nextDouble() - 0.5) * scale;
        }
        return out;
    }
}
