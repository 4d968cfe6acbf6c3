package dev.twofold.service.scoring;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.service.model.ServingModel;
import dev.twofold.service.testing.RandomModel;
import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.CompletableFuture;
import java.util.concurrent.CountDownLatch;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.Test;

class ScoringEngineTest {

    /** Cosines of float32 vectors against the double reference. */
    private static final double COSINE_TOLERANCE = 1e-5;
    private static final int THREADS = 16;
    private static final long SEED = 5150L;

    @Test
    void requests_scored_together_in_batches_get_the_answers_they_get_alone() throws Exception {
        RandomModel m = new RandomModel(SEED, 300, 700, 24, 6);
        ScoringEngine alone = new ScoringEngine(1, new ScalarBlockKernel());
        int[][] expected = new int[m.users][];
        float[][] expectedScores = new float[m.users][];
        for (int u = 0; u < m.users; u++) {
            Ranked r = rank(alone, m.model, u);
            expected[u] = r.items();
            expectedScores[u] = r.scores();
        }
        ScoringEngine shared = new ScoringEngine(2, new VectorBlockKernel());
        ExecutorService pool = Executors.newFixedThreadPool(THREADS);
        CountDownLatch go = new CountDownLatch(1);
        try {
            List<Future<Ranked>> answers = new ArrayList<>();
            for (int round = 0; round < 3; round++) {
                for (int u = 0; u < m.users; u++) {
                    int user = u;
                    answers.add(pool.submit(() -> {
                        go.await();
                        return rank(shared, m.model, user);
                    }));
                }
            }
            go.countDown();
            for (int a = 0; a < answers.size(); a++) {
                Ranked got = answers.get(a).get(60, TimeUnit.SECONDS);
                int u = a % m.users;
                assertArrayEquals(expected[u], got.items(), "user " + u);
                assertArrayEquals(expectedScores[u], got.scores(), 1e-5f, "user " + u);
            }
        } finally {
            pool.shutdownNow();
            pool.awaitTermination(10, TimeUnit.SECONDS);
        }
    }

    @Test
    void requests_for_two_models_at_once_are_each_scored_by_their_own_model() throws Exception {
        RandomModel a = new RandomModel(SEED + 1, 50, 300, 8, 3);
        RandomModel b = new RandomModel(SEED + 2, 50, 500, 8, 3);
        ScoringEngine engine = new ScoringEngine(1, new VectorBlockKernel());
        ExecutorService pool = Executors.newFixedThreadPool(THREADS);
        try {
            List<Future<Boolean>> checks = new ArrayList<>();
            for (int j = 0; j < 200; j++) {
                RandomModel m = j % 2 == 0 ? a : b;
                int user = j % 50;
                checks.add(pool.submit(() -> {
                    Ranked got = rank(engine, m.model, user);
                    Ranked want = rank(new ScoringEngine(1, new ScalarBlockKernel()), m.model, user);
                    return java.util.Arrays.equals(want.items(), got.items());
                }));
            }
            for (Future<Boolean> check : checks) {
                assertTrue(check.get(60, TimeUnit.SECONDS));
            }
        } finally {
            pool.shutdownNow();
            pool.awaitTermination(10, TimeUnit.SECONDS);
        }
    }

    @Test
    void a_batch_of_any_size_up_to_the_limit_ranks_each_user_as_a_plain_double_precision_scan_does() {
        RandomModel m = new RandomModel(SEED + 4, 20, 333, 16, 0);
        int[] skip = {0, 3, 7, 50, 51, 52, 200, 332};
        ScoringEngine engine = new ScoringEngine(1, new VectorBlockKernel());
        for (int size = 1; size <= ScoringEngine.MAX_BATCH; size++) {
            int[] offsets = new int[size];
            for (int b = 0; b < size; b++) {
                offsets[b] = b * m.k; // users 0..size-1
            }
            Ranked[] got = engine.rankTogether(m.model, m.model.userFactors(), offsets, 15, skip);
            for (int u = 0; u < size; u++) {
                // reference: every item's b_i + p_u·q_i in double, a full sort, skipped items left out
                double[] exact = new double[m.items];
                Integer[] order = new Integer[m.items];
                for (int i = 0; i < m.items; i++) {
                    double dot = m.bI[i];
                    for (int f = 0; f < m.k; f++) {
                        dot += (double) m.P[u * m.k + f] * m.Q[i * m.k + f];
                    }
                    exact[i] = dot;
                    order[i] = i;
                }
                java.util.Arrays.sort(order, (a, b) -> Double.compare(exact[b], exact[a]));
                List<Integer> want = new ArrayList<>();
                for (int i : order) {
                    if (java.util.Arrays.binarySearch(skip, i) < 0 && want.size() < 15) {
                        want.add(i);
                    }
                }
                assertEquals(15, got[u].size(), "batch of " + size + ", user " + u);
                for (int j = 0; j < 15; j++) {
                    int item = got[u].items()[j];
                    String where = "batch of " + size + ", user " + u + ", place " + j;
                    assertTrue(java.util.Arrays.binarySearch(skip, item) < 0, where + ": skipped item " + item);
                    assertEquals(exact[item], got[u].scores()[j], 1e-4, where);
                    assertEquals(exact[want.get(j)], got[u].scores()[j], 1e-4, where);
                }
            }
        }
    }

    @Test
    void batches_are_padded_to_whole_groups_only_when_two_or_more_users_would_be_left_over() {
        int[][] sizeToLanes = {{1, 1}, {2, 4}, {3, 4}, {4, 4}, {5, 5}, {6, 8}, {7, 8}, {9, 9}, {13, 13}, {14, 16},
            {15, 16}, {16, 16}};
        for (int[] pair : sizeToLanes) {
            assertEquals(pair[1], ScoringEngine.padded(pair[0], 4), "batch of " + pair[0]);
            assertEquals(pair[0], ScoringEngine.padded(pair[0], 1), "a kernel of single users pads nothing");
        }
    }

    @Test
    void similar_items_are_ranked_by_cosine_without_the_item_itself() {
        RandomModel m = new RandomModel(SEED + 3, 5, 400, 12, 0);
        ScoringEngine engine = new ScoringEngine(1, new VectorBlockKernel());
        for (int item = 0; item < m.items; item += 37) {
            Ranked similar = engine.similar(m.model, item, 25, new int[0], 0, 0);
            assertEquals(25, similar.size());
            double previous = Double.POSITIVE_INFINITY;
            for (int j = 0; j < similar.size(); j++) {
                int other = similar.items()[j];
                assertTrue(other != item, "the item itself is not similar to itself here");
                double want = cosine(m, item, other);
                assertEquals(want, similar.scores()[j], COSINE_TOLERANCE);
                assertTrue(similar.scores()[j] <= previous + COSINE_TOLERANCE);
                previous = similar.scores()[j];
            }
            double last = similar.scores()[similar.size() - 1];
            for (int other = 0; other < m.items; other++) {
                int o = other;
                boolean listed = java.util.Arrays.stream(similar.items()).anyMatch(i -> i == o);
                if (!listed && other != item) {
                    assertTrue(cosine(m, item, other) <= last + COSINE_TOLERANCE, "item " + other + " beats the list");
                }
            }
        }
    }

    @Test
    void later_answers_equal_blocking_ones_and_complete_on_a_scoring_thread() throws Exception {
        RandomModel m = new RandomModel(SEED + 5, 40, 500, 16, 5);
        ScoringEngine engine = new ScoringEngine(2, new VectorBlockKernel());
        try {
            List<CompletableFuture<String>> threads = new ArrayList<>();
            List<CompletableFuture<Ranked>> later = new ArrayList<>();
            for (int user = 0; user < m.users; user++) {
                CompletableFuture<Ranked> answer = engine.rankLater(m.model, m.model.userFactors(), user * 16, 15,
                        m.model.ratedItems(), m.model.ratedStart(user), m.model.ratedEnd(user));
                later.add(answer);
                threads.add(answer.thenApply(r -> Thread.currentThread().getName()));
            }
            for (int user = 0; user < m.users; user++) {
                Ranked want = rank(engine, m.model, user);
                Ranked got = later.get(user).get(10, TimeUnit.SECONDS);
                assertArrayEquals(want.items(), got.items(), "user " + user);
                assertArrayEquals(want.scores(), got.scores(), "user " + user);
                String thread = threads.get(user).get(10, TimeUnit.SECONDS);
                // completed on a scoring thread, or on this one when it was already done
                assertTrue(thread.startsWith("twofold-scoring-") || thread.equals(Thread.currentThread().getName()),
                        thread);
            }
        } finally {
            engine.close();
        }
    }

    @Test
    void a_closed_engine_refuses_work_with_a_clear_error() {
        RandomModel m = new RandomModel(SEED + 6, 5, 100, 8, 0);
        ScoringEngine engine = new ScoringEngine(1, new VectorBlockKernel());
        assertEquals(15, rank(engine, m.model, 0).size());
        engine.close();
        IllegalStateException e = assertThrows(IllegalStateException.class, () -> rank(engine, m.model, 1));
        assertEquals("the scoring engine is closed", e.getMessage());
    }

    private static Ranked rank(ScoringEngine engine, ServingModel model, int user) {
        int k = model.rank();
        return engine.rank(model, model.userFactors(), user * k, 15, model.ratedItems(), model.ratedStart(user),
                model.ratedEnd(user));
    }

    private static double cosine(RandomModel m, int a, int b) {
        double dot = 0;
        double na = 0;
        double nb = 0;
        for (int f = 0; f < m.k; f++) {
            double x = m.Q[a * m.k + f];
            double y = m.Q[b * m.k + f];
            dot += x * y;
            na += x * x;
            nb += y * y;
        }
        return na == 0 || nb == 0 ? 0 : dot / Math.sqrt(na * nb);
    }
}
