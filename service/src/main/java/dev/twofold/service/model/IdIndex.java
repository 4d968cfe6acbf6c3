package dev.twofold.service.model;

/**
 * External string id to dense index, as an open-addressing hash table over the id array itself:
 * the table holds only {@code index + 1} per slot (0 = empty), the strings stay in {@code ids}.
 * Memory is the id strings plus one {@code int} per slot (at most 4 slots per id), with no
 * per-entry objects, so a million users cost about 8 MB beyond their id strings.
 *
 * <p>Immutable and safe to share between threads once built.
 */
final class IdIndex {

    /** Slots are at least twice the ids, so a probe sequence stays short. */
    private static final int SLOTS_PER_ID = 2;

    private final String[] ids;
    private final int[] slots;
    private final int mask;
    private final int shift;
    private final int size;

    private IdIndex(String[] ids, int[] slots, int shift, int size) {
        this.ids = ids;
        this.slots = slots;
        this.mask = slots.length - 1;
        this.shift = shift;
        this.size = size;
    }

    /**
     * Indexes {@code ids[i] -> i} for every non-null entry. The array is kept, not copied.
     *
     * @throws IllegalArgumentException when an id appears twice
     */
    static IdIndex over(String[] ids) {
        int size = 0;
        for (String id : ids) {
            if (id != null) {
                size++;
            }
        }
        int capacity = Integer.highestOneBit(Math.max(2, size * SLOTS_PER_ID - 1)) << 1;
        int[] slots = new int[capacity];
        int mask = capacity - 1;
        int shift = Integer.numberOfLeadingZeros(mask);
        for (int index = 0; index < ids.length; index++) {
            String id = ids[index];
            if (id == null) {
                continue;
            }
            int slot = slotOf(id, shift);
            while (slots[slot] != 0) {
                if (ids[slots[slot] - 1].equals(id)) {
                    throw new IllegalArgumentException("id '" + id + "' appears at index " + (slots[slot] - 1)
                            + " and at index " + index);
                }
                slot = (slot + 1) & mask;
            }
            slots[slot] = index + 1;
        }
        return new IdIndex(ids, slots, shift, size);
    }

    /** The dense index of {@code id}, or -1 when it is not indexed. */
    int indexOf(String id) {
        int slot = slotOf(id, shift);
        int entry;
        while ((entry = slots[slot]) != 0) {
            if (ids[entry - 1].equals(id)) {
                return entry - 1;
            }
            slot = (slot + 1) & mask;
        }
        return -1;
    }

    /** The id at {@code index}, or null where the index is unused. */
    String id(int index) {
        return ids[index];
    }

    /** Number of ids indexed (non-null entries). */
    int size() {
        return size;
    }

    /** Length of the index space, including unused indices. */
    int indexSpace() {
        return ids.length;
    }

    /**
     * Fibonacci hashing: the top bits of {@code hash · 2³²/φ}, so ids whose String hash codes
     * differ only in low bits (user-1, user-2, ...) still land far apart.
     */
    private static int slotOf(String id, int shift) {
        return (id.hashCode() * 0x9E3779B9) >>> shift;
    }
}
