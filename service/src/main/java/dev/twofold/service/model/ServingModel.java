package dev.twofold.service.model;

import dev.twofold.db.registry.ModelFactors;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.snapshot.IdDirectory;
import dev.twofold.trainer.fit.FoldIn;
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
 *       k), the same Q in {@link ItemPanels} for the scoring kernel, 1/‖q_i‖ for cosine
 *       similarity, b_i, the items ordered by popularity (ties by lower index), index → id, and
 *       directory item index → serving index;</li>
 *   <li>the trust side: for the shared coupling, Z (the trustee factors of T ≈ P·Zᵀ) and ZᵀZ, which
 *       a fold-in with trust terms needs; and <em>trust-built</em> vectors for users without
 *       factors who trust users with factors (see {@link #trustBuiltRow});</li>
 *   <li>μ, the rating scale, the fold-in settings and the registry header.</li>
 * </ul>
 * The predicted rating is r̂(u,i) = μ + b_u + b_i + p_u·q_i, clamped to the scale.
 *
 * <p>Memory: P, Q and Z as stored (no copy when every trained item is servable), one more copy
 * of Q as panels, the id strings, one {@code int} hash slot per id ({@link IdIndex}, at most
 * four), one {@code int} per rating and per user for the rated lists, a few {@code int}s and
 * {@code float}s per item, k + 2 values per trust-built user. No per-user or per-item objects
 * beyond the id strings.
 *
 * <p>The arrays returned by the accessors are the model's own, shared across threads without
 * copying: callers must never write to them.
 */
public final class ServingModel {

    private final ModelHeader header;
    private final FoldSettings foldSettings;
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
    private final float[] trustFactors;
    private final int[] trustBuiltUsers;
    private final float[] trustBuiltFactors;
    private final float[] trustBuiltBias;

    private final IdIndex items;
    private final int[] servingIndexOf;
    private final float[] itemFactors;
    private final ItemPanels panels;
    private final float[] inverseNorms;
    private final float[] itemBias;
    private final int[] popularityOrder;
    private final FoldIn foldIn;

    private ServingModel(Builder b) {
        this.header = b.header;
        this.foldSettings = b.foldSettings;
        this.rank = b.factors.rank();
        this.globalMean = b.header.globalMean();
        this.scaleMin = b.header.scaleMin();
        this.scaleMax = b.header.scaleMax();
        this.users = b.users;
        this.userFactors = b.factors.userFactors();
        this.userBias = b.factors.userBias();
        this.knownUsers = b.factors.knownUsers();
        this.trainedUsers = b.factors.numUsers();
        this.ratedStart = b.ratedStart;
        this.ratedItems = b.ratedItems;
        this.trustFactors = b.trustFactors;
        this.trustBuiltUsers = b.trustBuiltUsers;
        this.trustBuiltFactors = b.trustBuiltFactors;
        this.trustBuiltBias = b.trustBuiltBias;
        this.items = b.items;
        this.servingIndexOf = b.servingIndexOf;
        this.itemFactors = b.itemFactors;
        this.panels = ItemPanels.of(b.itemFactors, b.itemBias.length, rank);
        this.inverseNorms = inverseNorms(b.itemFactors, b.itemBias.length, rank);
        this.itemBias = b.itemBias;
        this.popularityOrder = b.popularityOrder;
        if (foldSettings.neighbours()) {
            this.foldIn = FoldIn.withNeighbours(rank, foldSettings.biases(), globalMean, foldSettings.lambda(),
                    itemFactors, itemBias, userFactors, foldSettings.trustWeight())
                    .withBiasPrior(foldSettings.biasPrior());
        } else {
            double[] gram = b.trustFactors == null ? null : FoldIn.gram(b.trustFactors, trainedUsers, rank);
            this.foldIn = new FoldIn(rank, foldSettings.biases(), globalMean, foldSettings.lambda(), itemFactors,
                    itemBias, b.trustFactors, gram, foldSettings.trustWeight(), foldSettings.trustAlpha())
                    .withBiasPrior(foldSettings.biasPrior());
        }
    }

    /** {@link #assemble(ModelHeader, ModelFactors, IdDirectory, int[], int[], int[], int[], float[])} without trust edges. */
    public static ServingModel assemble(ModelHeader header, ModelFactors factors, IdDirectory ids, int[] ratingUser,
            int[] ratingItem) {
        return assemble(header, factors, ids, ratingUser, ratingItem, new int[0], new int[0], new float[0]);
    }

    /**
     * Builds the serving form of a model version.
     *
     * <p>{@code ratingUser}/{@code ratingItem} are the (user, item) pairs rated <em>now</em>, in
     * directory indices (typically a fresh {@link dev.twofold.db.snapshot.Snapshot}), so items
     * rated after training are never recommended either. Pairs whose user index is outside the
     * directory, or whose item the model cannot serve, are skipped. Users and items whose id is
     * gone from the directory are not servable. {@code truster}/{@code trustee}/{@code trustWeight}
     * are the trust edges now; they give users without factors a trust-built vector. Cost:
     * O(nnz log(nnz/users) + edges·k + (users + items)·k), plus users·k²/2 for ZᵀZ under the
     * shared coupling.
     *
     * @throws IllegalArgumentException when the factors do not fit the header (rank, array sizes)
     *         or hold a value that is not finite; the message names the array and the index
     */
    public static ServingModel assemble(ModelHeader header, ModelFactors factors, IdDirectory ids, int[] ratingUser,
            int[] ratingItem, int[] truster, int[] trustee, float[] trustWeight) {
        checkShapes(header, factors, ratingUser, ratingItem);
        if (truster.length != trustee.length || truster.length != trustWeight.length) {
            throw new IllegalArgumentException("trust edges: " + truster.length + " trusters, " + trustee.length
                    + " trustees, " + trustWeight.length + " weights");
        }
        Builder b = new Builder(header, factors);
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
        if (b.foldSettings.sharesFactors() && factors.trustFactors() != null) {
            if (factors.trustFactors().length != factors.userFactors().length) {
                throw new IllegalArgumentException("model " + header.id() + ": Z has " + factors.trustFactors().length
                        + " values, expected " + factors.numUsers() + " users × rank " + k);
            }
            requireFinite(header, "Z (trust factors)", factors.trustFactors(), k);
            b.trustFactors = factors.trustFactors();
        }

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

        b.users = IdIndex.over(userIds);
        b.ratedStart = ratedStart;
        b.ratedItems = ratedItems;
        b.items = IdIndex.over(itemIds);
        b.servingIndexOf = servingIndexOf;
        b.itemFactors = Q;
        b.itemBias = itemBias;
        b.popularityOrder = popularityOrder(popularity);
        buildTrustRows(b, numUserIndices, truster, trustee, trustWeight);
        return new ServingModel(b);
    }

    /** The registry row this model was loaded from. */
    public ModelHeader header() {
        return header;
    }

    /** Model version id. */
    public long id() {
        return header.id();
    }

    /** How users are folded into this model. */
    public FoldSettings foldSettings() {
        return foldSettings;
    }

    /**
     * The solve that folds one user into this model: against Q, b_i, μ, λ and the trust term of
     * its coupling: under the shared coupling Z with ZᵀZ (trustees: user indices below
     * {@link #trainedUsers()}); under the neighbour coupling β ‖p_u − Σ w̄_uv p_v‖² over the
     * trusted users' rows of P (trustees: users with factors). Items are serving item indices.
     * Shared and thread-safe; each thread brings its own scratch.
     */
    public FoldIn foldIn() {
        return foldIn;
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

    /** The external id of a user index, or null where the index is unused or out of range. */
    public String userId(int user) {
        return user >= 0 && user < users.indexSpace() ? users.id(user) : null;
    }

    /** Size of the user index space: every {@link #userIndex} is below it. */
    public int userIndexSpace() {
        return users.indexSpace();
    }

    /** Size of the user index space the model was trained on: P, b_u and Z have this many rows. */
    public int trainedUsers() {
        return trainedUsers;
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

    /** Z (row-major, stride k, {@link #trainedUsers()} rows) under the shared coupling, else null. Shared, never modify. */
    public float[] trustFactors() {
        return trustFactors;
    }

    /**
     * The row of a user's trust-built vector in {@link #trustBuiltFactors()} and
     * {@link #trustBuiltBias()}, or -1. A user has one when they have no factors of their own but
     * trust at least one user who has: the vector is the trust-weighted average of those users'
     * p_v and b_v (what neighbour regularisation, SocialMF, Jamali &amp; Ester 2010, gives a user
     * without ratings when the neighbour term dominates). Cost O(log m) for m such users.
     */
    public int trustBuiltRow(int user) {
        return user < 0 ? -1 : Math.max(-1, Arrays.binarySearch(trustBuiltUsers, user));
    }

    /** Trust-built vectors, row-major with stride k. Shared, never modify. */
    public float[] trustBuiltFactors() {
        return trustBuiltFactors;
    }

    /** Trust-built biases. Shared, never modify. */
    public float[] trustBuiltBias() {
        return trustBuiltBias;
    }

    /** Number of users with a trust-built vector. */
    public int trustBuiltUsers() {
        return trustBuiltUsers.length;
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

    /**
     * The serving item index of a directory item index, or -1 when this model cannot score it
     * (no factors, or an item newer than the model's directory). Serving indices increase with
     * directory indices, so a sorted list stays sorted.
     */
    public int servingIndexOf(int directoryItem) {
        return directoryItem >= 0 && directoryItem < servingIndexOf.length ? servingIndexOf[directoryItem] : -1;
    }

    /** The external id of a serving item index. */
    public String itemId(int item) {
        return items.id(item);
    }

    /** Q, row-major with stride {@link #rank()}, by serving item index. Shared, never modify. */
    public float[] itemFactors() {
        return itemFactors;
    }

    /** Q as panels for the scoring kernel. */
    public ItemPanels panels() {
        return panels;
    }

    /** 1/‖q_i‖ by serving item index, 0 for an all-zero row. Shared, never modify. */
    public float[] inverseNorms() {
        return inverseNorms;
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
                + numItems() + ", ratings=" + ratedItems.length + ", trust-built users=" + trustBuiltUsers.length
                + ", coupling=" + foldSettings.coupling() + "]";
    }

    /**
     * Trust-built vectors for users without factors: p_u = Σ w_uv p_v / Σ w_uv and likewise b_u,
     * over the edges u → v whose trustee v has factors. Edges in any order; O(edges·k).
     */
    private static void buildTrustRows(Builder b, int numUserIndices, int[] truster, int[] trustee,
            float[] trustWeight) {
        ModelFactors f = b.factors;
        int k = f.rank();
        int trained = f.numUsers();
        double[] weightSum = null;
        int[] rowOf = null;
        int rows = 0;
        for (int e = 0; e < truster.length; e++) {
            int u = truster[e];
            int v = trustee[e];
            if (u < 0 || u >= numUserIndices || (u < trained && f.knownUsers().get(u))
                    || v < 0 || v >= trained || !f.knownUsers().get(v)) {
                continue;
            }
            if (rowOf == null) {
                rowOf = new int[numUserIndices];
                Arrays.fill(rowOf, -1);
                weightSum = new double[numUserIndices];
            }
            if (rowOf[u] < 0) {
                rowOf[u] = rows++;
            }
            weightSum[u] += trustWeight[e];
        }
        b.trustBuiltUsers = new int[rows];
        b.trustBuiltFactors = new float[rows * k];
        b.trustBuiltBias = new float[rows];
        if (rows == 0) {
            return;
        }
        // rows in user order, so trustBuiltRow can binary-search the sorted user list
        int next = 0;
        for (int u = 0; u < numUserIndices; u++) {
            if (rowOf[u] >= 0) {
                rowOf[u] = next;
                b.trustBuiltUsers[next++] = u;
            }
        }
        double[] sums = new double[rows * k];
        double[] biasSums = new double[rows];
        for (int e = 0; e < truster.length; e++) {
            int u = truster[e];
            int v = trustee[e];
            if (u < 0 || u >= numUserIndices || rowOf[u] < 0 || v < 0 || v >= trained || !f.knownUsers().get(v)) {
                continue;
            }
            int r = rowOf[u];
            double w = trustWeight[e] / weightSum[u];
            for (int x = 0; x < k; x++) {
                sums[r * k + x] += w * f.userFactors()[v * k + x];
            }
            biasSums[r] += w * f.userBias()[v];
        }
        for (int j = 0; j < sums.length; j++) {
            b.trustBuiltFactors[j] = (float) sums[j];
        }
        for (int r = 0; r < rows; r++) {
            b.trustBuiltBias[r] = (float) biasSums[r];
        }
    }

    private static float[] inverseNorms(float[] Q, int n, int k) {
        float[] out = new float[n];
        for (int i = 0; i < n; i++) {
            double s = 0;
            for (int f = 0; f < k; f++) {
                double q = Q[i * k + f];
                s += q * q;
            }
            out[i] = s > 0 ? (float) (1.0 / Math.sqrt(s)) : 0f;
        }
        return out;
    }

    /** The parts of a model while it is being assembled. */
    private static final class Builder {
        final ModelHeader header;
        final ModelFactors factors;
        final FoldSettings foldSettings;
        IdIndex users;
        int[] ratedStart;
        int[] ratedItems;
        float[] trustFactors;
        int[] trustBuiltUsers;
        float[] trustBuiltFactors;
        float[] trustBuiltBias;
        IdIndex items;
        int[] servingIndexOf;
        float[] itemFactors;
        float[] itemBias;
        int[] popularityOrder;

        Builder(ModelHeader header, ModelFactors factors) {
            this.header = header;
            this.factors = factors;
            this.foldSettings = FoldSettings.of(header);
        }
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
