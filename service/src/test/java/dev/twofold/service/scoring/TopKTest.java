package dev.twofold.service.scoring;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;

import java.util.Arrays;
import java.util.Comparator;
import java.util.SplittableRandom;
import java.util.stream.IntStream;
import org.junit.jupiter.api.Test;

class TopKTest {

    private static final long SEED = 20260101L;
    private static final int TRIALS = 300;

    @Test
    void keeps_the_same_items_in_the_same_order_as_a_full_sort_whatever_the_offer_order() {
        SplittableRandom random = new SplittableRandom(SEED);
        TopK heap = new TopK(4);
        for (int trial = 0; trial < TRIALS; trial++) {
            int n = random.nextInt(400);
            int capacity = random.nextInt(n + 6);
            int levels = 1 + random.nextInt(12);
            float[] score = new float[n];
            for (int i = 0; i < n; i++) {
                score[i] = random.nextInt(levels) * 0.25f - 1f;
            }
            int[] offerOrder = IntStream.range(0, n).toArray();
            for (int i = n - 1; i > 0; i--) {
                int j = random.nextInt(i + 1);
                int t = offerOrder[i];
                offerOrder[i] = offerOrder[j];
                offerOrder[j] = t;
            }

            heap.reset(capacity);
            for (int item : offerOrder) {
                heap.offer(item, score[item]);
            }
            int[] items = new int[capacity];
            float[] scores = new float[capacity];
            int kept = heap.drainBestFirst(items, scores);

            int[] expected = IntStream.range(0, n).boxed()
                    .sorted(Comparator.<Integer>comparingDouble(i -> -score[i]).thenComparingInt(i -> i))
                    .limit(capacity).mapToInt(Integer::intValue).toArray();
            assertEquals(expected.length, kept, "trial " + trial);
            assertArrayEquals(expected, Arrays.copyOf(items, kept), "trial " + trial);
            for (int j = 0; j < kept; j++) {
                assertEquals(score[expected[j]], scores[j], "trial " + trial + " rank " + j);
            }
            assertEquals(0, heap.size(), "drained");
        }
    }

    @Test
    void a_zero_capacity_keeps_nothing() {
        TopK heap = new TopK(0);
        heap.offer(3, 1f);
        assertEquals(0, heap.size());
    }
}
