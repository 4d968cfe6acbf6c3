package dev.twofold.service.model;

/**
 * Q re-laid for scoring many items per instruction: items in panels of {@value #WIDTH}, each panel
 * stored factor by factor, so factor f of the panel's items is {@value #WIDTH} consecutive floats:
 *
 * <pre>
 *   data[p·k·W + f·W + j] = Q[(p·W + j)·k + f]      (W = {@value #WIDTH}, j &lt; W)
 * </pre>
 *
 * With that layout, p·q for a panel of items is k multiply-adds of a broadcast p_f with one
 * contiguous row of W floats: what a SIMD unit does in one or two instructions. The last panel is
 * padded with zero rows. Memory: one more copy of Q (rounded up to a whole panel).
 *
 * <p>Immutable once built; the array is shared, never modify it.
 */
public final class ItemPanels {

    /** Items per panel: two 256-bit or one 512-bit vector of float32. */
    public static final int WIDTH = 16;

    private final float[] data;
    private final float[] rows;
    private final int rank;
    private final int items;
    private final int panels;

    private ItemPanels(float[] data, float[] rows, int rank, int items, int panels) {
        this.data = data;
        this.rows = rows;
        this.rank = rank;
        this.items = items;
        this.panels = panels;
    }

    /** Panels of the first {@code items} rows of the row-major {@code Q} (stride {@code rank}). Cost O(items·k). */
    public static ItemPanels of(float[] Q, int items, int rank) {
        if ((long) items * rank > Q.length) {
            throw new IllegalArgumentException(items + " items of rank " + rank + " exceed the " + Q.length
                    + " floats of Q");
        }
        int panels = (items + WIDTH - 1) / WIDTH;
        float[] data = new float[Math.multiplyExact(panels * WIDTH, rank)];
        for (int i = 0; i < items; i++) {
            int base = (i / WIDTH) * rank * WIDTH + (i % WIDTH);
            int row = i * rank;
            for (int f = 0; f < rank; f++) {
                data[base + f * WIDTH] = Q[row + f];
            }
        }
        return new ItemPanels(data, Q, rank, items, panels);
    }

    /** The panel array (see the class comment for the layout). Shared, never modify. */
    public float[] data() {
        return data;
    }

    /** The row-major Q the panels were built from (kept, not copied). Shared, never modify. */
    public float[] rows() {
        return rows;
    }

    public int rank() {
        return rank;
    }

    /** Real items; those at {@code items() .. panels()·WIDTH − 1} are padding. */
    public int items() {
        return items;
    }

    public int panels() {
        return panels;
    }
}
