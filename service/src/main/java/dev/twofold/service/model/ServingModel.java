package dev.twofold.service.model;

import dev.twofold.db.registry.ModelFactors;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.snapshot.IdDirectory;
import java.util.Arrays;
import java.util.BitSet;

/**
 * One model version held in memory for serving, immutable once assembled and shared by every
 * request thread.
 *
 * <p>What it holds, all as flat primitive arrays:
 * <ul>
 *   <li>user side, in the id directory's user index space: P (row-major, stride k, rows as
 *       trained), b_u, which users have learned factors, and each user's rated items as CSR
 *       ({@code ratedItems[ratedStart(u) .. ratedEnd(u))}, sorted ascending);</li>
 *   <li>item side, in a compact <em>serving item index</em> space that holds only the items the
 *       model learned factors for, in the order of their directory indices: Q (row-major, stride
 *       k), b_i, the items ordered by popularity (ties by lower index), and index → id;</li>
 *   <li>μ, the rating scale and the registry header.</li>
 * </ul>
 * The predicted rating is r̂(u,i) = μ + b_u + b_i + p_u·q_i, clamped to the scale.
 *
 * <p>Memory: P and Q as stored (no copy when every trained item is servable), the id strings,
 * one {@code int} hash slot per id ({@link IdIndex}, at most four), one {@code int} per rating and
 * per user for the rated lists, one {@code int} per item for the popularity order. No per-user or
 * per-item objects beyond the id strings.
 *
 * <p>The arrays returned by the accessors are the model's own, shared across threads without
 * copying: callers must never write to them.
 */
public final class ServingModel {

    private final ModelHeader header;
    private final int rank;
    private final float globalMean;
    private final float scaleMin;
    private final float scaleMax;

    private final IdIndex users;
    private final float[] userFactors;
    private final float[] userBias;
    private final BitSet knownUsers;
    private final int trainedUsers;
    private final int[] ratedStart;
    private final int[] ratedItems;

    private final IdIndex items;
    private final float[] itemFactors;
    private final float[] itemBias;
    private final int[] popularityOrder;

    private ServingModel(ModelHeader header, ModelFactors factors, IdIndex users, int[] ratedStart, int[] ratedItems,
            IdIndex items, float[] itemFactors, float[] itemBias, int[] popularityOrder) {
        this.header = header;
        this.rank = factors.rank();
        this.globalMean = header.globalMean();
        this.scaleMin = header.scaleMin();
        this.scaleMax = header.scaleMax();
        this.users = users;
        this.userFactors = factors.userFactors();
        this.userBias = factors.userBias();
        this.knownUsers = factors.knownUsers();
        this.trainedUsers = factors.numUsers();
        this.ratedStart = ratedStart;
        this.ratedItems = ratedItems;
        this.items = items;
        this.itemFactors = itemFactors;
        this.itemBias = itemBias;
        this.popularityOrder = popularityOrder;
    }

    /**
     * Builds the serving form of a model version.
     *
     * <p>{@code ratingUser}/{@code ratingItem} are the (user, item) pairs rated <em>now</em>, in
     * directory indices (typically a fresh {@link dev.twofold.db.snapshot.Snapshot}), so items
     * rated after training are never recommended either. Pairs whose user index is outside the
     * directory, or whose item the model cannot serve, are skipped. Users and items whose id is
     * gone from the directory are not servable. Cost: O(nnz log(nnz/users) + (users + items)·k).
     *
     * @throws IllegalArgumentException when the factors do not fit the header (rank, array sizes)
     *         or hold a value that is not finite; the message names the array and the index
     */
    public static ServingModel assemble(ModelHeader header, ModelFactors factors, IdDirectory ids, int[] ratingUser,
            int[] ratingItem) {
        checkShapes(header, factors, ratingUser, ratingItem);
        int k = factors.rank();
        int trainedItems = factors.numItems();
        String[] directoryItems = ids.itemIds();

        int[] servingIndexOf = new int[Math.max(trainedItems, directoryItems.length)];
        Arrays.fill(servingIndexOf, -1);
        int numItems = 0;
        for (int i = 0; i < trainedItems; i++) {
            if (factors.knownItems().get(i) && i < directoryItems.length && directoryItems[i] != null) {
                servingIndexOf[i] = numItems++;
            }
        }

        String[] itemIds = new String[numItems];
        float[] Q;
        float[] itemBias;
        float[] popularity;
        if (numItems == trainedItems) {
            System.arraycopy(directoryItems, 0, itemIds, 0, numItems);
            Q = factors.itemFactors();
            itemBias = factors.itemBias();
            popularity = factors.itemPopularity();
        } else {
            Q = new float[numItems * k];
            itemBias = new float[numItems];
            popularity = new float[numItems];
            for (int i = 0; i < trainedItems; i++) {
                int s = servingIndexOf[i];
                if (s >= 0) {
                    itemIds[s] = directoryItems[i];
                    System.arraycopy(factors.itemFactors(), i * k, Q, s * k, k);
                    itemBias[s] = factors.itemBias()[i];
                    popularity[s] = factors.itemPopularity()[i];
                }
            }
        }
        requireFinite(header, "Q (item factors)", Q, k);
        requireFinite(header, "b_i (item biases)", itemBias, 1);
        requireFinite(header, "P (user factors)", factors.userFactors(), k);
        requireFinite(header, "b_u (user biases)", factors.userBias(), 1);

        String[] userIds = ids.userIds();
        int numUserIndices = userIds.length;
        int[] ratedStart = new int[numUserIndices + 1];
        for (int r = 0; r < ratingUser.length; r++) {
            int u = ratingUser[r];
            int i = ratingItem[r];
            if (u >= 0 && u < numUserIndices && i >= 0 && i < servingIndexOf.length && servingIndexOf[i] >= 0) {
                ratedStart[u + 1]++;
            }
        }
        for (int u = 0; u < numUserIndices; u++) {
            ratedStart[u + 1] += ratedStart[u];
        }
        int[] ratedItems = new int[ratedStart[numUserIndices]];
        int[] fill = Arrays.copyOf(ratedStart, numUserIndices);
        for (int r = 0; r < ratingUser.length; r++) {
            int u = ratingUser[r];
            int i = ratingItem[r];
            if (u >= 0 && u < numUserIndices && i >= 0 && i < servingIndexOf.length && servingIndexOf[i] >= 0) {
                ratedItems[fill[u]++] = servingIndexOf[i];
            }
        }
        for (int u = 0; u < numUserIndices; u++) {
            if (ratedStart[u + 1] - ratedStart[u] > 1) {
                Arrays.sort(ratedItems, ratedStart[u], ratedStart[u + 1]);
            }
        }

        return new ServingModel(header, factors, IdIndex.over(userIds), ratedStart, ratedItems,
                IdIndex.over(itemIds), Q, itemBias, popularityOrder(popularity));
    }

    /** The registry row this model was loaded from. */
    public ModelHeader header() {
        return header;
    }

    /** Model version id. */
    public long id() {
        return header.id();
    }

    /** k, the stride of P and Q. */
    public int rank() {
        return rank;
    }

    /** μ. */
    public float globalMean() {
        return globalMean;
    }

    public float scaleMin() {
        return scaleMin;
    }

    public float scaleMax() {
        return scaleMax;
    }

    /** {@code value} limited to the rating scale. */
    public float clampToScale(double value) {
        return (float) Math.max(scaleMin, Math.min(scaleMax, value));
    }

    /** The user index of {@code userId} in the id directory, or -1 when the user is unknown. */
    public int userIndex(String userId) {
        return users.indexOf(userId);
    }

    /** Whether the user (a {@link #userIndex}, or -1) has factors learned by this model. */
    public boolean hasFactors(int user) {
        return user >= 0 && user < trainedUsers && knownUsers.get(user);
    }

    /** P, row-major with stride {@link #rank()}; row u starts at {@code u·k}. Shared, never modify. */
    public float[] userFactors() {
        return userFactors;
    }

    /** b_u by user index. Shared, never modify. */
    public float[] userBias() {
        return userBias;
    }

    /** Start of user {@code user}'s rated items in {@link #ratedItems()}; 0-length for unknown users. */
    public int ratedStart(int user) {
        return user < 0 ? 0 : ratedStart[user];
    }

    /** End (exclusive) of user {@code user}'s rated items in {@link #ratedItems()}. */
    public int ratedEnd(int user) {
        return user < 0 ? 0 : ratedStart[user + 1];
    }

    /** Serving item indices of every user's rated items, sorted ascending per user. Shared, never modify. */
    public int[] ratedItems() {
        return ratedItems;
    }

    /** Number of servable items; serving item indices are {@code 0..numItems()-1}. */
    public int numItems() {
        return itemBias.length;
    }

    /** The serving item index of {@code itemId}, or -1 when this model cannot score it. */
    public int itemIndex(String itemId) {
        return items.indexOf(itemId);
    }

    /** The external id of a serving item index. */
    public String itemId(int item) {
        return items.id(item);
    }

    /** Q, row-major with stride {@link #rank()}, by serving item index. Shared, never modify. */
    public float[] itemFactors() {
        return itemFactors;
    }

    /** b_i by serving item index. Shared, never modify. */
    public float[] itemBias() {
        return itemBias;
    }

    /** Serving item indices, most popular first, ties by lower index. Shared, never modify. */
    public int[] popularityOrder() {
        return popularityOrder;
    }

    @Override
    public String toString() {
        return "ServingModel[id=" + header.id() + ", rank=" + rank + ", users=" + users.size() + ", items="
                + numItems() + ", ratings=" + ratedItems.length + "]";
    }

    /**
     * Item indices sorted by popularity descending, ties by lower index, without boxing: each item
     * becomes one {@code long} whose high half orders like the negated float and whose low half is
     * the index, and the longs are sorted.
     */
    private static int[] popularityOrder(float[] popularity) {
        long[] keys = new long[popularity.length];
        for (int i = 0; i < popularity.length; i++) {
            float p = Float.isNaN(popularity[i]) ? Float.NEGATIVE_INFINITY : popularity[i];
            int bits = Float.floatToIntBits(p);
            int ascending = bits ^ ((bits >> 31) & 0x7fffffff);
            keys[i] = ((long) ~ascending << 32) | i;
        }
        Arrays.sort(keys);
        int[] order = new int[keys.length];
        for (int r = 0; r < keys.length; r++) {
            order[r] = (int) keys[r];
        }
        return order;
    }

    private static void checkShapes(ModelHeader header, ModelFactors factors, int[] ratingUser, int[] ratingItem) {
        int k = factors.rank();
        String model = "model " + header.id();
        if (k != header.rank() || k < 1) {
            throw new IllegalArgumentException(model + ": factors have rank " + k + " but the header says "
                    + header.rank());
        }
        if (factors.userFactors().length != 1L * factors.numUsers() * k) {
            throw new IllegalArgumentException(model + ": P has " + factors.userFactors().length + " values, expected "
                    + factors.numUsers() + " users × rank " + k);
        }
        if (factors.itemFactors().length != 1L * factors.numItems() * k) {
            throw new IllegalArgumentException(model + ": Q has " + factors.itemFactors().length + " values, expected "
                    + factors.numItems() + " items × rank " + k);
        }
        if (factors.itemPopularity().length != factors.numItems()) {
            throw new IllegalArgumentException(model + ": item popularity has " + factors.itemPopularity().length
                    + " values, expected " + factors.numItems() + " items");
        }
        if (ratingUser.length != ratingItem.length) {
            throw new IllegalArgumentException("rated pairs: " + ratingUser.length + " users but " + ratingItem.length
                    + " items");
        }
        if (!(header.scaleMin() < header.scaleMax()) || !Float.isFinite(header.globalMean())) {
            throw new IllegalArgumentException(model + ": scale " + header.scaleMin() + ".." + header.scaleMax()
                    + " or global mean " + header.globalMean() + " is not usable");
        }
    }

    private static void requireFinite(ModelHeader header, String name, float[] values, int stride) {
        for (int j = 0; j < values.length; j++) {
            if (!Float.isFinite(values[j])) {
                throw new IllegalArgumentException("model " + header.id() + ": " + name + " holds " + values[j]
                        + " at row " + (j / stride) + "; the model cannot be served");
            }
        }
    }
}
