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
