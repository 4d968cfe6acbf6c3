package dev.twofold.service.scoring;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.service.model.ItemPanels;
import java.util.Arrays;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/** The SIMD and the scalar kernel compute the same inner products, each checked against double arithmetic. */
class BlockKernelTest {

    /** Float32 sums of up to 67 products of values below 1 in magnitude, against the double sum. */
    private static final double DOT_TOLERANCE = 1e-5;
    private static final long SEED = 31L;

    @Test
    void the_vector_api_is_what_the_tests_run_with() {
        assertTrue(BlockKernels.vectorAvailable(), "surefire passes --add-modules jdk.incubator.vector");
        assertTrue(BlockKernels.best() instanceof VectorBlockKernel);
    }

    @Test
    void both_kernels_give_the_double_precision_inner_products_for_any_user_count_rank_and_panel_range() {
        SplittableRandom random = new SplittableRandom(SEED);
        BlockKernel[] kernels = {new VectorBlockKernel(), new ScalarBlockKernel()};
        for (int trial = 0; trial < 60; trial++) {
            int k = 1 + random.nextInt(67);
            int items = 1 + random.nextInt(150);
            int users = 1 + random.nextInt(9);
            float[] q = values(random, items * k);
            float[] x = values(random, users * k);
            ItemPanels panels = ItemPanels.of(q, items, k);
            int from = random.nextInt(panels.panels());
            int to = from + 1 + random.nextInt(panels.panels() - from);
            int stride = (to - from) * ItemPanels.WIDTH;
            for (BlockKernel kernel : kernels) {
                float[] out = new float[users * stride];
                java.util.Arrays.fill(out, Float.NaN);
                kernel.dot(panels, from, to, x, users, out);
                for (int u = 0; u < users; u++) {
                    for (int j = 0; j < stride; j++) {
                        int item = from * ItemPanels.WIDTH + j;
                        double want = 0;
                        for (int f = 0; item < items && f < k; f++) {
                            want += (double) x[u * k + f] * q[item * k + f];
                        }
                        assertEquals(want, out[u * stride + j], DOT_TOLERANCE, kernel.description() + " trial " + trial
                                + " user " + u + " item " + item + (item >= items ? " (padding)" : ""));
                    }
                }
            }
        }
    }

    @Test
    void both_kernels_pick_the_same_items_above_a_threshold() {
        SplittableRandom random = new SplittableRandom(SEED + 1);
        for (int trial = 0; trial < 200; trial++) {
            int length = 16 * (1 + random.nextInt(8));
            float[] out = values(random, length + 32);
            float[] perItem = values(random, length + 16);
            int offset = random.nextInt(16);
            int first = 16 * random.nextInt(length / 16);
            int last = first + random.nextInt(length - first + 1);
            float threshold = (float) (random.nextDouble() * 2 - 1);
            boolean multiply = random.nextBoolean();
            int[] a = new int[length];
            int[] b = new int[length];
            int na = new VectorBlockKernel().above(out, offset, perItem, multiply, first, last, threshold, a);
            int nb = new ScalarBlockKernel().above(out, offset, perItem, multiply, first, last, threshold, b);
            int[] expected = java.util.stream.IntStream.range(first, last).filter(i -> (multiply
                    ? out[offset + i] * perItem[i] : out[offset + i] + perItem[i]) > threshold).toArray();
            assertArrayEquals(expected, Arrays.copyOf(a, na), "vector, trial " + trial);
            assertArrayEquals(expected, Arrays.copyOf(b, nb), "scalar, trial " + trial);
        }
    }

    @Test
    void panels_hold_q_factor_by_factor_with_zero_padding() {
        int k = 3;
        int items = 17;
        float[] q = new float[items * k];
        for (int i = 0; i < q.length; i++) {
            q[i] = i + 1;
        }
        ItemPanels panels = ItemPanels.of(q, items, k);
        assertEquals(2, panels.panels());
        assertEquals(2 * 16 * k, panels.data().length);
        // item 5, factor 2 is Q[5·3 + 2] = 18, stored at panel 0, row 2, lane 5
        assertEquals(18f, panels.data()[2 * 16 + 5]);
        // item 16 (panel 1, lane 0), factor 1 is Q[16·3 + 1] = 50
        assertEquals(50f, panels.data()[16 * k + 16 + 0]);
        assertEquals(0f, panels.data()[16 * k + 16 + 1], "padding");
    }

    private static float[] values(SplittableRandom random, int n) {
        float[] out = new float[n];
        for (int i = 0; i < n; i++) {
            out[i] = (float) (random.nextDouble() * 2 - 1);
        }
        return out;
    }
}
