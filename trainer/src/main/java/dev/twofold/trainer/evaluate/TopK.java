package dev.twofold.trainer.evaluate;

/**
 * The k best (item, score) pairs of a stream, kept in a bounded min-heap on primitive arrays: O(log k)
 * per offer that enters, O(1) per offer that does not, no allocation after construction. Higher
 * scores are better; equal scores rank the lower item index first, so results are deterministic.
 */
public final class TopK {

    private final int capacity;
    private final int[] items;
    private final double[] scores;
    private int size;

    public TopK(int capacity) {
        if (capacity < 1) {
            throw new IllegalArgumentException("top-k size " + capacity + " must be at least 1");
        }
        this.capacity = capacity;
        this.items = new int[capacity];
        this.scores = new double[capacity];
    }

    public void clear() {
        size = 0;
    }

    public int size() {
        return size;
    }

    /** Offers a candidate; NaN scores are ignored. */
    public void offer(int item, double score) {
        if (Double.isNaN(score)) {
            return;
        }
        if (size < capacity) {
            items[size] = item;
            scores[size] = score;
            siftUp(size++);
        } else if (better(score, item, scores[0], items[0])) {
            items[0] = item;
            scores[0] = score;
            siftDown(0);
        }
    }

    /**
     * Offers items {@code firstItem .. firstItem + count − 1} with scores {@code scores[offset ..
     * offset + count)}, in that order: the same as calling {@link #offer} for each, but a candidate is
     * looked at only when it is at least the worst kept score, which once the heap is full is one
     * comparison for almost every item.
     */
    public void offerAll(double[] scores, int offset, int count, int firstItem) {
        int end = offset + count;
        for (int at = nextAtLeast(scores, offset, end, floor()); at < end;
                at = nextAtLeast(scores, at + 1, end, floor())) {
            offer(firstItem + at - offset, scores[at]);
        }
    }

    /** The first position in {@code from..to-1} whose score is at least {@code floor} (never a NaN), or {@code to}. */
    private static int nextAtLeast(double[] scores, int from, int to, double floor) {
        for (int at = from; at < to; at++) {
            if (scores[at] >= floor) {
                return at;
            }
        }
        return to;
    }

    /** The score a candidate must at least reach to be looked at: the worst kept one, once the heap is full. */
    private double floor() {
        return size < capacity ? Double.NEGATIVE_INFINITY : scores[0];
    }

    /**
     * Writes the kept items best first into {@code out[0..size)} and empties the heap.
     *
     * @return how many items were written
     */
    public int drainBestFirst(int[] out) {
        int n = size;
        while (size > 0) {
            out[size - 1] = items[0];
            size--;
            items[0] = items[size];
            scores[0] = scores[size];
            siftDown(0);
        }
        return n;
    }

    private static boolean better(double s1, int i1, double s2, int i2) {
        return s1 > s2 || (s1 == s2 && i1 < i2);
    }

    private void siftUp(int at) {
        while (at > 0) {
            int parent = (at - 1) >>> 1;
            if (!better(scores[parent], items[parent], scores[at], items[at])) {
                return;
            }
            swap(at, parent);
            at = parent;
        }
    }

    private void siftDown(int at) {
        while (true) {
            int left = 2 * at + 1;
            if (left >= size) {
                return;
            }
            int worst = left;
            int right = left + 1;
            if (right < size && better(scores[left], items[left], scores[right], items[right])) {
                worst = right;
            }
            if (!better(scores[at], items[at], scores[worst], items[worst])) {
                return;
            }
            swap(at, worst);
            at = worst;
        }
    }

    private void swap(int a, int b) {
        int i = items[a];
        items[a] = items[b];
        items[b] = i;
        double s = scores[a];
        scores[a] = scores[b];
        scores[b] = s;
    }
}
