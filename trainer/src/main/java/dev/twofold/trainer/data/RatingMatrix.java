package dev.twofold.trainer.data;

/**
 * Ratings as a sparse {@code numUsers × numItems} matrix, held in both orientations so that both
 * half-steps of a factorisation read their rows contiguously:
 *
 * <ul>
 *   <li>by user (CSR): the ratings of user u are positions {@code userStart[u] .. userStart[u+1]-1}
 *       of {@code userItems} / {@code userValues}, items ascending;
 *   <li>by item (CSC): the ratings of item i are positions {@code itemStart[i] .. itemStart[i+1]-1}
 *       of {@code itemUsers} / {@code itemValues}, users ascending.
 * </ul>
 *
 * <p>Each rating costs 16 bytes (an int index and a float value per orientation) plus the two
 * pointer arrays; there is no object per rating. The arrays returned by the accessors are the
 * matrix's own storage, exposed for numeric kernels: treat them as read-only.
 */
public final class RatingMatrix {

    private final int numUsers;
    private final int numItems;
    private final int[] userStart;
    private final int[] userItems;
    private final float[] userValues;
    private final int[] itemStart;
    private final int[] itemUsers;
    private final float[] itemValues;

    private RatingMatrix(int numUsers, int numItems, int[] userStart, int[] userItems, float[] userValues,
            int[] itemStart, int[] itemUsers, float[] itemValues) {
        this.numUsers = numUsers;
        this.numItems = numItems;
        this.userStart = userStart;
        this.userItems = userItems;
        this.userValues = userValues;
        this.itemStart = itemStart;
        this.itemUsers = itemUsers;
        this.itemValues = itemValues;
    }

    /** Builds the matrix from all rows of parallel (user, item, value) arrays. */
    public static RatingMatrix of(int numUsers, int numItems, int[] user, int[] item, float[] value) {
        return of(numUsers, numItems, user, item, value, null);
    }

    /**
     * Builds the matrix from the rows at {@code positions} of parallel (user, item, value) arrays
     * (all rows when {@code positions} is null). Cost O(nnz + numUsers + numItems), two counting sorts.
     *
     * @throws IllegalArgumentException naming the row when an index is out of range, a value is not
     *     finite, or a (user, item) pair occurs twice
     */
    public static RatingMatrix of(int numUsers, int numItems, int[] user, int[] item, float[] value, int[] positions) {
        if (numUsers < 0 || numItems < 0) {
            throw new IllegalArgumentException("matrix size " + numUsers + " × " + numItems + " must not be negative");
        }
        if (user.length != item.length || user.length != value.length) {
            throw new IllegalArgumentException("rating arrays differ in length: users " + user.length + ", items "
                    + item.length + ", values " + value.length);
        }
        int nnz = positions == null ? user.length : positions.length;
        for (int s = 0; s < nnz; s++) {
            int p = positions == null ? s : positions[s];
            if (p < 0 || p >= user.length) {
                throw new IllegalArgumentException("row position " + p + " outside 0.." + (user.length - 1));
            }
            if (user[p] < 0 || user[p] >= numUsers) {
                throw new IllegalArgumentException("rating row " + p + ": user index " + user[p] + " outside 0.." + (numUsers - 1));
            }
            if (item[p] < 0 || item[p] >= numItems) {
                throw new IllegalArgumentException("rating row " + p + ": item index " + item[p] + " outside 0.." + (numItems - 1));
            }
            if (!Float.isFinite(value[p])) {
                throw new IllegalArgumentException("rating row " + p + ": value " + value[p] + " is not a finite number");
            }
        }

        // Counting sort by item (stable), then by user: rows come out with items ascending.
        int[] itemStart = new int[numItems + 1];
        for (int s = 0; s < nnz; s++) {
            itemStart[item[positions == null ? s : positions[s]] + 1]++;
        }
        prefixSum(itemStart);
        int[] byItem = new int[nnz];
        int[] fill = itemStart.clone();
        for (int s = 0; s < nnz; s++) {
            int p = positions == null ? s : positions[s];
            byItem[fill[item[p]]++] = p;
        }

        int[] userStart = new int[numUsers + 1];
        for (int s = 0; s < nnz; s++) {
            userStart[user[byItem[s]] + 1]++;
        }
        prefixSum(userStart);
        int[] userItems = new int[nnz];
        float[] userValues = new float[nnz];
        fill = userStart.clone();
        for (int s = 0; s < nnz; s++) {
            int p = byItem[s];
            int at = fill[user[p]]++;
            userItems[at] = item[p];
            userValues[at] = value[p];
        }
        byItem = null;

        for (int u = 0; u < numUsers; u++) {
            for (int at = userStart[u] + 1; at < userStart[u + 1]; at++) {
                if (userItems[at] == userItems[at - 1]) {
                    throw new IllegalArgumentException("two ratings for user index " + u + " and item index "
                            + userItems[at] + "; keep only the latest");
                }
            }
        }

        // Scatter the user-ordered rows into columns: users come out ascending within each item.
        int[] itemUsers = new int[nnz];
        float[] itemValues = new float[nnz];
        fill = itemStart.clone();
        for (int u = 0; u < numUsers; u++) {
            for (int at = userStart[u]; at < userStart[u + 1]; at++) {
                int to = fill[userItems[at]]++;
                itemUsers[to] = u;
                itemValues[to] = userValues[at];
            }
        }
        return new RatingMatrix(numUsers, numItems, userStart, userItems, userValues, itemStart, itemUsers, itemValues);
    }

    private static void prefixSum(int[] counts) {
        for (int j = 1; j < counts.length; j++) {
            counts[j] += counts[j - 1];
        }
    }

    public int numUsers() {
        return numUsers;
    }

    public int numItems() {
        return numItems;
    }

    /** Number of stored ratings. */
    public int nnz() {
        return userItems.length;
    }

    /** CSR row pointers, length numUsers + 1. */
    public int[] userStart() {
        return userStart;
    }

    /** CSR item index of each rating, ascending within a user's row. */
    public int[] userItems() {
        return userItems;
    }

    /** CSR value of each rating. */
    public float[] userValues() {
        return userValues;
    }

    /** CSC column pointers, length numItems + 1. */
    public int[] itemStart() {
        return itemStart;
    }

    /** CSC user index of each rating, ascending within an item's column. */
    public int[] itemUsers() {
        return itemUsers;
    }

    /** CSC value of each rating. */
    public float[] itemValues() {
        return itemValues;
    }

    /** Number of ratings of user u. */
    public int userCount(int u) {
        return userStart[u + 1] - userStart[u];
    }

    /** Number of ratings of item i. */
    public int itemCount(int i) {
        return itemStart[i + 1] - itemStart[i];
    }

    /** Mean of all ratings, or NaN when there are none. */
    public double mean() {
        if (userValues.length == 0) {
            return Double.NaN;
        }
        double sum = 0;
        for (float v : userValues) {
            sum += v;
        }
        return sum / userValues.length;
    }

    /** The rating of user u for item i, or NaN when u has not rated i. Binary search, O(log n_u). */
    public float get(int u, int i) {
        int lo = userStart[u];
        int hi = userStart[u + 1] - 1;
        while (lo <= hi) {
            int mid = (lo + hi) >>> 1;
            int at = userItems[mid];
            if (at < i) {
                lo = mid + 1;
            } else if (at > i) {
                hi = mid - 1;
            } else {
                return userValues[mid];
            }
        }
        return Float.NaN;
    }

    /**
     * Per item, how many ratings are at least {@code threshold}: how many people liked it. Used to
     * rank items for people nobody knows and as the most-popular baseline.
     */
    public float[] countAtLeast(float threshold) {
        float[] counts = new float[numItems];
        for (int i = 0; i < numItems; i++) {
            int c = 0;
            for (int at = itemStart[i]; at < itemStart[i + 1]; at++) {
                if (itemValues[at] >= threshold) {
                    c++;
                }
            }
            counts[i] = c;
        }
        return counts;
    }

    /** Bytes held by the arrays of this matrix (both orientations and the pointers). */
    public long footprintBytes() {
        return 4L * (userStart.length + userItems.length + userValues.length + itemStart.length + itemUsers.length
                + itemValues.length);
    }
}
