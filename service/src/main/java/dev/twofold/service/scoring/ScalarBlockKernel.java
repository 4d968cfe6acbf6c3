package dev.twofold.service.scoring;

import dev.twofold.service.model.ItemPanels;

/**
 * The portable {@link BlockKernel}: plain Java loops, one user at a time, a panel's
 * {@value ItemPanels#WIDTH} sums kept in a small array. Used when the JVM was started without
 * {@code --add-modules jdk.incubator.vector}; several times slower than {@link VectorBlockKernel}.
 */
final class ScalarBlockKernel implements BlockKernel {

    private static final int W = ItemPanels.WIDTH;

    @Override
    public void dot(float[] panels, int k, int fromPanel, int toPanel, float[] x, int users, float[] out) {
        int stride = (toPanel - fromPanel) * W;
        float[] acc = new float[W];
        for (int u = 0; u < users; u++) {
            int xo = u * k;
            for (int p = fromPanel; p < toPanel; p++) {
                java.util.Arrays.fill(acc, 0f);
                int q = p * k * W;
                for (int f = 0; f < k; f++) {
                    float xf = x[xo + f];
                    int row = q + f * W;
                    for (int j = 0; j < W; j++) {
                        acc[j] += xf * panels[row + j];
                    }
                }
                System.arraycopy(acc, 0, out, u * stride + (p - fromPanel) * W, W);
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
