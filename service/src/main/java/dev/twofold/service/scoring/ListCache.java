package dev.twofold.service.scoring;

import java.util.Arrays;
import java.util.concurrent.atomic.AtomicReferenceArray;
import java.util.concurrent.atomic.LongAdder;

/**
 * The ranked lists of users the model alone knows, kept for one model so a user asked for again
 * is answered without scoring every item: their {@value #DEPTH} best unrated items with scores.
 * A request for {@code count} items excluding some is answered from the list when {@code count}
 * plus the excluded items fit in {@value #DEPTH} (the excluded items are dropped from the list,
 * the rest is still the best in order); a larger request is scored and not kept.
 *
 * <p><b>Why it is valid.</b> The list of a user the model alone knows depends only on the model:
 * their vector and rated items are the model's. A user folded in since the load, or erased, is not
 * served from here ({@code LiveModel} decides), and a new model starts with an empty cache. So a
 * kept list is exactly what scoring again would return, and freshness is untouched.
 *
 * <p><b>Memory.</b> One slot per user index modulo the slot count (no hashing, no locks; a lookup
 * allocates only its answer); a user whose slot is taken by another replaces them. Each list is one
 * int array of at most {@value #ENTRY_BYTES} bytes with its slot, so {@code budgetBytes} holds
 * {@code budgetBytes / ENTRY_BYTES} users, and never more than that. Thread-safe.
 */
public final class ListCache {

    /** Items kept per user: count plus excluded items up to this are answered from the cache. */
    public static final int DEPTH = 32;
    /** Most bytes one user costs: the array (16-byte header, user, size, items, scores) and its slot reference. */
    public static final int ENTRY_BYTES = 16 + 4 * (2 + 2 * DEPTH) + 4;

    private static final int USER = 0;
    private static final int SIZE = 1;
    private static final int HEADER = 2;

    private final AtomicReferenceArray<int[]> slots;
    private final Stats stats;

    /** Lookups of all the caches of one service, across model swaps. */
    public static final class Stats {
        private final LongAdder hits = new LongAdder();
        private final LongAdder misses = new LongAdder();

        /** Requests answered from a kept list. */
        public long hits() {
            return hits.sum();
        }

        /** Requests that could have been answered from a kept list but were scored (and then kept). */
        public long misses() {
            return misses.sum();
        }
    }

    /**
     * @param users       the model's user index space (more slots than users would stay empty)
     * @param budgetBytes most bytes the kept lists may take; 0 keeps nothing
     */
    public ListCache(int users, long budgetBytes, Stats stats) {
        if (budgetBytes < 0) {
            throw new IllegalArgumentException("budget " + budgetBytes + " bytes must be >= 0");
        }
        this.slots = new AtomicReferenceArray<>((int) Math.min(Math.max(users, 0), budgetBytes / ENTRY_BYTES));
        this.stats = stats;
    }

    /** Lookups of this cache and the others sharing its counters. */
    public Stats stats() {
        return stats;
    }

    /** How many users' lists fit. */
    public int slots() {
        return slots.length();
    }

    /** Whether a request for {@code count} items excluding {@code excluded} known items can be answered from here. */
    boolean fits(int count, int excluded) {
        return slots.length() > 0 && count + excluded <= DEPTH;
    }

    /**
     * The best {@code count} of {@code user}'s kept list without the items in {@code skip}
     * (sorted), or null when the user's list is not kept or cannot give {@code count} items (it was
     * cut at {@value #DEPTH} and too many of them are skipped).
     */
    Recommendation get(int user, Strategy strategy, int count, int[] skip) {
        int[] entry = slots.get(user % slots.length());
        Recommendation kept = entry == null || entry[USER] != user ? null : answer(entry, strategy, count, skip);
        if (kept == null) {
            stats.misses.increment();
        } else {
            stats.hits.increment();
        }
        return kept;
    }

    /**
     * Keeps {@code user}'s list {@code full} (best first; at most {@value #DEPTH} items are kept) and
     * answers a request that {@link #fits} from it, as {@link #get} would.
     */
    Recommendation keep(int user, Recommendation full, int count, int[] skip) {
        return answer(put(user, full.items(), full.scores()), full.strategy(), count, skip);
    }

    /**
     * The first {@code count} items of a kept list that are not in {@code skip} (sorted), or null
     * when the list was cut at {@value #DEPTH} and skipping leaves fewer than {@code count}: items
     * below the kept ones might be next.
     */
    private static Recommendation answer(int[] entry, Strategy strategy, int count, int[] skip) {
        int size = entry[SIZE];
        int[] items = new int[Math.min(count, size)];
        float[] scores = new float[items.length];
        int n = 0;
        for (int j = 0; j < size && n < items.length; j++) {
            int item = entry[HEADER + j];
            if (skip.length == 0 || Arrays.binarySearch(skip, item) < 0) {
                items[n] = item;
                scores[n++] = Float.intBitsToFloat(entry[HEADER + size + j]);
            }
        }
        if (n < count && size == DEPTH) {
            return null;
        }
        return n == items.length ? new Recommendation(strategy, items, scores)
                : new Recommendation(strategy, Arrays.copyOf(items, n), Arrays.copyOf(scores, n));
    }

    /** Forgets {@code user}'s list, if kept (their data was erased). */
    public void drop(int user) {
        if (user < 0 || slots.length() == 0) {
            return;
        }
        int slot = user % slots.length();
        int[] entry = slots.get(slot);
        if (entry != null && entry[USER] == user) {
            slots.compareAndSet(slot, entry, null);
        }
    }

    /**
     * Keeps {@code user}'s best items, at most {@value #DEPTH} of them; fewer means these are all
     * the items the user has not rated. Returns the kept entry.
     */
    int[] put(int user, int[] items, float[] scores) {
        int size = Math.min(items.length, DEPTH);
        int[] entry = new int[HEADER + 2 * size];
        entry[USER] = user;
        entry[SIZE] = size;
        System.arraycopy(items, 0, entry, HEADER, size);
        for (int j = 0; j < size; j++) {
            entry[HEADER + size + j] = Float.floatToRawIntBits(scores[j]);
        }
        slots.set(user % slots.length(), entry);
        return entry;
    }
}
