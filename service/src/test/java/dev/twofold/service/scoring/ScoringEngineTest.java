package dev.twofold.service.scoring;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.service.model.ServingModel;
import dev.twofold.service.testing.RandomModel;
import java.util.ArrayList;
import java.util.List;
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
