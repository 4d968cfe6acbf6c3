package dev.twofold.service.testing;

import dev.twofold.db.registry.ModelFactors;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.snapshot.IdDirectory;
import dev.twofold.service.model.ServingModel;
import java.time.Instant;
import java.util.BitSet;

/**
 * A hand-made model of a tiny cooking community (invented numbers, for tests): rank 3, scale 1..5,
 * μ = 3.5. The shapes are chosen to exercise the edges:
 * <ul>
 *   <li>cook {@code cy} has large factors, so some predictions exceed 5 and are clamped;</li>
 *   <li>{@code bread} and {@code pie} have identical factors and biases: an exact tie;</li>
 *   <li>{@code cake} and {@code salad} are equally popular;</li>
 *   <li>{@code dee} is in the directory but has no factors; {@code eve} joined after training;
 *       index 4 is a forgotten user (no id);</li>
 *   <li>{@code tart} was trained without data (no factors); {@code jam} appeared after training.</li>
 * </ul>
 * Directory item indices 0..5 are also the serving item indices.
 */
public final class KitchenModel {

    public static final long MODEL_ID = 7;
    public static final int K = 3;
    public static final float MU = 3.5f;
    public static final float SCALE_MIN = 1f;
    public static final float SCALE_MAX = 5f;

    public static final String[] USER_IDS = {"ana", "ben", "cy", "dee", null, "eve"};
    public static final String[] ITEM_IDS = {"soup", "cake", "bread", "salad", "stew", "pie", "tart", "jam"};
    /** Items the model can score, in serving index order. */
    public static final String[] SERVABLE_ITEMS = {"soup", "cake", "bread", "salad", "stew", "pie"};
    public static final int TRAINED_USERS = 4;
    public static final int TRAINED_ITEMS = 7;

    public static final float[] P = {
        1.0f, 0.5f, -0.2f,   // ana
        -0.8f, 0.3f, 0.9f,   // ben
        0.2f, 2.0f, 1.5f,    // cy
        0f, 0f, 0f,          // dee: no factors
    };
    public static final float[] B_U = {0.2f, -0.3f, 0.5f, 0f};
    public static final float[] Q = {
        0.9f, 0.1f, 0.0f,    // soup
        -0.5f, 0.8f, 0.3f,   // cake
        0.3f, 0.3f, 0.3f,    // bread
        0.0f, -0.6f, 0.7f,   // salad
        0.6f, 0.6f, -0.4f,   // stew
        0.3f, 0.3f, 0.3f,    // pie (same as bread)
        0f, 0f, 0f,          // tart: no factors
    };
    public static final float[] B_I = {0.1f, 0.4f, -0.1f, 0.0f, 0.2f, -0.1f, 0f};
    public static final float[] POPULARITY = {50f, 80f, 20f, 80f, 5f, 10f, 0f};

    /** (user, item) ratings as they are now, in directory indices. */
    public static final int[] RATING_USER = {0, 0, 0, 1, 3, 3, 5, 2};
    public static final int[] RATING_ITEM = {0, 4, 6, 1, 1, 3, 0, 7};

    private KitchenModel() {
    }

    public static ServingModel build() {
        return build(MODEL_ID);
    }

    /** The same model under another version id. */
    public static ServingModel build(long id) {
        return ServingModel.assemble(header(id, K, TRAINED_USERS, TRAINED_ITEMS, MU, SCALE_MIN, SCALE_MAX), factors(),
                new IdDirectory(USER_IDS.clone(), ITEM_IDS.clone()), RATING_USER.clone(), RATING_ITEM.clone());
    }

    public static ModelHeader header() {
        return header(MODEL_ID, K, TRAINED_USERS, TRAINED_ITEMS, MU, SCALE_MIN, SCALE_MAX);
    }

    public static ModelHeader header(long id, int rank, int users, int items, float mu, float min, float max) {
        return header(id, rank, users, items, mu, min, max, Instant.parse("2026-01-01T00:00:00Z"));
    }

    public static ModelHeader header(long id, int rank, int users, int items, float mu, float min, float max,
            Instant createdAt) {
        return new ModelHeader(id, "active", rank, "shared", 0.05f, 1f, 1f, min, max, mu, users, items, createdAt,
                createdAt, "{}", "{}", "{}", null);
    }

    /** The model under another id and creation time, its item factors multiplied by {@code qScale}. */
    public static ServingModel build(long id, Instant createdAt, float qScale) {
        ModelFactors f = factors();
        float[] q = f.itemFactors();
        for (int j = 0; j < q.length; j++) {
            q[j] *= qScale;
        }
        return ServingModel.assemble(header(id, K, TRAINED_USERS, TRAINED_ITEMS, MU, SCALE_MIN, SCALE_MAX, createdAt), f,
                new IdDirectory(USER_IDS.clone(), ITEM_IDS.clone()), RATING_USER.clone(), RATING_ITEM.clone());
    }

    public static ModelFactors factors() {
        BitSet knownUsers = new BitSet();
        knownUsers.set(0, 3);
        BitSet knownItems = new BitSet();
        knownItems.set(0, 6);
        return new ModelFactors(K, P.clone(), B_U.clone(), knownUsers, Q.clone(), B_I.clone(), POPULARITY.clone(),
                knownItems, null);
    }

    /** r̂ before clamping, in double, straight from the arrays above. */
    public static double rawPrediction(int user, int item) {
        double r = MU + B_I[item];
        if (user >= 0 && user < 3) {
            r += B_U[user];
            for (int f = 0; f < K; f++) {
                r += (double) P[user * K + f] * Q[item * K + f];
            }
        }
        return r;
    }

    public static double clamp(double r) {
        return Math.max(SCALE_MIN, Math.min(SCALE_MAX, r));
    }

    public static int itemIndex(String id) {
        for (int i = 0; i < ITEM_IDS.length; i++) {
            if (ITEM_IDS[i].equals(id)) {
                return i;
            }
        }
        return -1;
    }
}
