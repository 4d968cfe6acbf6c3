package dev.twofold.db.ingest;

/** A stable sort of row numbers by a long key: equal keys keep their file order. */
final class StableOrder {

    private StableOrder() {
    }

    /** Row numbers 0..n-1 ordered by {@code keys}, ties in ascending row order. Bottom-up merge sort, O(n log n). */
    static int[] of(long[] keys, int n) {
        int[] a = new int[n];
        for (int i = 0; i < n; i++) {
            a[i] = i;
        }
        int[] b = new int[n];
        for (int width = 1; width < n; width *= 2) {
            for (int lo = 0; lo < n; lo += 2 * width) {
                int mid = Math.min(lo + width, n);
                int hi = Math.min(lo + 2 * width, n);
                int i = lo;
                int j = mid;
                int k = lo;
                while (i < mid && j < hi) {
                    b[k++] = keys[a[j]] < keys[a[i]] ? a[j++] : a[i++];
                }
                while (i < mid) {
                    b[k++] = a[i++];
                }
                while (j < hi) {
                    b[k++] = a[j++];
                }
            }
            int[] t = a;
            a = b;
            b = t;
        }
        return a;
    }
}
