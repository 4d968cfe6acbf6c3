package dev.twofold.service.scoring;

/**
 * The best {@code capacity} (item, score) pairs of a stream, kept in a bounded binary min-heap on
 * two primitive arrays: the root is the worst pair kept so far, so each offer costs O(1) when it
 * cannot enter and O(log capacity) when it can, O(n log capacity) for n offers instead of a full
 * sort's O(n log n).
 *
 * <p>"Better" means a higher score, and between equal scores the lower item index, so the result
 * does not depend on the order of the offers. Reusable: {@link #reset} empties it without
 * allocating when the capacity fits. Not thread-safe; one per thread.
 */
final class TopK {

    private int[] items;
    private float[] scores;
    private int capacity;
    private int size;

    TopK(int capacity) {
        items = new int[Math.max(1, capacity)];
        scores = new float[items.length];
        reset(capacity);
    }

    /** Empties the heap and sets how many pairs it keeps. */
    void reset(int capacity) {
        if (capacity < 0) {
            throw new IllegalArgumentException("capacity " + capacity + " must be >= 0");
        }
        if (capacity > items.length) {
            items = new int[capacity];
            scores = new float[capacity];
        }
        this.capacity = capacity;
        this.size = 0;
    }

    int size() {
        return size;
    }

    /**
     * The score an offer must beat to enter: the worst kept score once full, −∞ before, +∞ for
     * capacity 0. (An offer that only ties it enters when its item index is lower.)
     */
    float threshold() {
        if (size < capacity) {
            return Float.NEGATIVE_INFINITY;
        }
        return capacity == 0 ? Float.POSITIVE_INFINITY : scores[0];
    }

    /** Keeps (item, score) when it is among the best {@code capacity} offered so far. */
    void offer(int item, float score) {
        if (size < capacity) {
            int at = size++;
            items[at] = item;
            scores[at] = score;
            siftUp(at);
        } else if (capacity > 0 && better(item, score, items[0], scores[0])) {
            items[0] = item;
            scores[0] = score;
            siftDown(0);
        }
    }

    /**
     * Writes the kept pairs best first into the given arrays (at least {@link #size()} long),
     * returns how many, and leaves the heap empty.
     */
    int drainBestFirst(int[] outItems, float[] outScores) {
        int n = size;
        for (int at = n - 1; at >= 0; at--) {
            outItems[at] = items[0];
            outScores[at] = scores[0];
            size--;
            if (size > 0) {
                items[0] = items[size];
                scores[0] = scores[size];
                siftDown(0);
            }
        }
        return n;
    }

    private static boolean better(int itemA, float scoreA, int itemB, float scoreB) {
        return scoreA > scoreB || (scoreA == scoreB && itemA < itemB);
    }

    private void siftUp(int at) {
        int item = items[at];
        float score = scores[at];
        while (at > 0) {
            int parent = (at - 1) >>> 1;
            if (!better(items[parent], scores[parent], item, score)) {
                break;
            }
            items[at] = items[parent];
            scores[at] = scores[parent];
            at = parent;
        }
        items[at] = item;
        scores[at] = score;
    }

    private void siftDown(int at) {
        int item = items[at];
        float score = scores[at];
        int half = size >>> 1;
        while (at < half) {
            int child = 2 * at + 1;
            int right = child + 1;
            if (right < size && better(items[child], scores[child], items[right], scores[right])) {
                child = right;
            }
            if (!better(item, score, items[child], scores[child])) {
                break;
            }
            items[at] = items[child];
            scores[at] = scores[child];
            at = child;
        }
        items[at] = item;
        scores[at] = score;
    }
}
