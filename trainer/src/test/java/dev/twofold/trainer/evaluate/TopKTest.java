package dev.twofold.trainer.evaluate;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;

import java.util.Arrays;
import java.util.Comparator;
import java.util.Random;
import java.util.stream.IntStream;
import org.junit.jupiter.api.Test;

class TopKTest {

    @Test
    void keeps_the_same_items_as_a_full_sort_with_ties_broken_by_lower_index() {
        Random random = new Random(13);
        for (int trial = 0; trial < 50; trial++) {
            int n = 1 + random.nextInt(300);
            int k = 1 + random.nextInt(20);
            double[] scores = new double[n];
            for (int i = 0; i < n; i++) {
                scores[i] = random.nextInt(12); // many ties
            }
            TopK heap = new TopK(k);
            for (int i = 0; i < n; i++) {
                heap.offer(i, scores[i]);
            }
            int[] got = new int[k];
            int length = heap.drainBestFirst(got);
            int[] expected = IntStream.range(0, n).boxed()
                    .sorted(Comparator.<Integer>comparingDouble(i -> -scores[i]).thenComparingInt(i -> i))
                    .limit(k).mapToInt(Integer::intValue).toArray();
            assertEquals(expected.length, length);
            assertArrayEquals(expected, Arrays.copyOf(got, length), "trial " + trial);
            assertEquals(0, heap.size());
        }
    }

    @Test
    void offering_a_run_of_items_keeps_what_offering_them_one_by_one_keeps() {
        Random random = new Random(29);
        for (int trial = 0; trial < 200; trial++) {
            int n = 1 + random.nextInt(400);
            int k = 1 + random.nextInt(15);
            double[] scores = new double[n + 3];
            for (int i = 0; i < scores.length; i++) {
                int kind = random.nextInt(10);
                scores[i] = kind == 0 ? Double.NaN : kind == 1 ? Double.NEGATIVE_INFINITY : random.nextInt(20); // ties
            }
            TopK one = new TopK(k);
            TopK run = new TopK(k);
            int offset = 3;
            for (int from = 0; from < n; from += 37) { // runs of 37 items, as blocks
                int count = Math.min(37, n - from);
                for (int i = from; i < from + count; i++) {
                    one.offer(i, scores[offset + i]);
                }
                run.offerAll(scores, offset + from, count, from);
            }
            int[] a = new int[k];
            int[] b = new int[k];
            assertEquals(one.drainBestFirst(a), run.drainBestFirst(b), "trial " + trial);
            assertArrayEquals(a, b, "trial " + trial);
        }
    }

    @Test
    void ignores_nan_scores() {
        TopK heap = new TopK(3);
        heap.offer(0, Double.NaN);
        heap.offer(1, 2.0);
        heap.offer(2, Double.NaN);
        int[] out = new int[3];
        assertEquals(1, heap.drainBestFirst(out));
        assertEquals(1, out[0]);
    }
}
