package dev.twofold.service.scoring;

import dev.twofold.service.model.ItemPanels;

/**
 * The portable {@link BlockKernel}: plain Java, one user at a time, one dot product per item over
 * the row-major Q (four interleaved sums, see {@link ScoreKernel}). Used when the JVM was started
 * without {@code --add-modules jdk.incubator.vector}; several times slower than
 * {@link VectorBlockKernel}.
 */
final class ScalarBlockKernel implements BlockKernel {

    private static final int W = ItemPanels.WIDTH;

    /** Row by row over the row-major Q (strided panel reads would be slower without SIMD). */
    @Override
    public void dot(ItemPanels panels, int fromPanel, int toPanel, float[] x, int users, float[] out) {
        int k = panels.rank();
        float[] rows = panels.rows();
        int stride = (toPanel - fromPanel) * W;
        int first = fromPanel * W;
        int last = Math.min(toPanel * W, panels.items());
        for (int u = 0; u < users; u++) {
            int o = u * stride - first;
            for (int i = first; i < last; i++) {
                out[o + i] = ScoreKernel.dot(x, u * k, rows, i * k, k);
            }
            for (int i = last; i < toPanel * W; i++) {
                out[o + i] = 0f;
            }
        }
    }

    @Override
    public int above(float[] out, int offset, float[] perItem, boolean multiply, int first, int last, float threshold,
            int[] candidates) {
        int n = 0;
        for (int i = first; i < last; i++) {
            float s = multiply ? out[offset + i] * perItem[i] : out[offset + i] + perItem[i];
            if (s > threshold) {
                candidates[n++] = i;
            }
        }
        return n;
    }

    @Override
    public String description() {
        return "scalar Java loops (start the JVM with --add-modules jdk.incubator.vector for the SIMD kernel)";
    }
}
