package dev.twofold.service.scoring;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;

import dev.twofold.service.model.ServingModel;
import dev.twofold.service.testing.KitchenModel;
import dev.twofold.service.testing.RandomModel;
import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.Test;

class RankerTest {

    /** Float32 arithmetic against the double-precision reference, on values of order 10. */
    private static final double SCORE_TOLERANCE = 1e-5;
    private static final long SEED = 424242L;

    private final Ranker ranker = new Ranker();

    @Test
    void a_known_user_gets_unrated_items_ranked_by_the_unclamped_prediction_with_ties_by_lower_index() {
        ServingModel model = KitchenModel.build();
        Recommendation rec = ranker.recommend(model, "cy", 10, List.of());
        assertEquals(Strategy.MODEL, rec.strategy());
        // Worked by hand from KitchenModel: cake 6.35 (clamped to 5), bread 5.01 and pie 5.01 (exact tie,
        // bread has the lower index), stew 4.92, soup 4.48, salad 3.85.
        assertArrayEquals(new int[] {1, 2, 5, 4, 0, 3}, rec.items());
        double[] expected = {5.0, 5.0, 5.0, 4.92, 4.48, 3.85};
        for (int j = 0; j < expected.length; j++) {
            assertEquals(expected[j], rec.scores()[j], SCORE_TOLERANCE, "rank " + j);
        }
    }

    @Test
    void an_unknown_user_gets_the_most_popular_items_scored_by_mean_plus_item_bias() {
        ServingModel model = KitchenModel.build();
        Recommendation rec = ranker.recommend(model, "zoe", 4, List.of("soup"));
        assertEquals(Strategy.POPULAR, rec.strategy());
        assertArrayEquals(new int[] {1, 3, 2, 5}, rec.items(), "cake, salad (tie by index), bread, pie; soup excluded");
        for (int j = 0; j < rec.size(); j++) {
            assertEquals(KitchenModel.MU + KitchenModel.B_I[rec.items()[j]], rec.scores()[j], SCORE_TOLERANCE);
        }
    }

    @Test
    void a_user_without_factors_gets_popular_items_without_their_rated_ones() {
        ServingModel model = KitchenModel.build();
        Recommendation dee = ranker.recommend(model, "dee", 10, List.of());
        assertEquals(Strategy.POPULAR, dee.strategy());
        assertArrayEquals(new int[] {0, 2, 5, 4}, dee.items(), "dee rated cake and salad");
        Recommendation eve = ranker.recommend(model, "eve", 10, List.of());
        assertArrayEquals(new int[] {1, 3, 2, 5, 4}, eve.items(), "eve rated soup after training");
    }

    @Test
    void exclusions_of_one_request_do_not_leak_into_the_next_on_the_same_thread() {
        ServingModel model = KitchenModel.build();
        ranker.recommend(model, "ana", 10, List.of("cake", "bread"));
        ranker.recommend(model, "dee", 10, List.of("pie"));
        Recommendation cy = ranker.recommend(model, "cy", 10, List.of());
        assertEquals(6, cy.size());
        Recommendation zoe = ranker.recommend(model, "zoe", 10, List.of());
        assertEquals(6, zoe.size());
    }

    @Test
    void concurrent_requests_get_the_same_answers_as_sequential_ones() throws Exception {
        RandomModel m = new RandomModel(SEED, 200, 500, 8, 5);
        int[][] sequential = new int[m.users][];
        for (int u = 0; u < m.users; u++) {
            sequential[u] = ranker.recommend(m.model, m.userIds[u], 20, List.of(m.itemIds[u])).items();
        }
        ExecutorService pool = Executors.newFixedThreadPool(4);
        try {
            List<Future<int[]>> answers = new ArrayList<>();
            for (int round = 0; round < 3; round++) {
                for (int u = 0; u < m.users; u++) {
                    int user = u;
                    answers.add(pool.submit(() -> ranker.recommend(m.model, m.userIds[user], 20,
                            List.of(m.itemIds[user])).items()));
                }
            }
            for (int a = 0; a < answers.size(); a++) {
                assertArrayEquals(sequential[a % m.users], answers.get(a).get(), "answer " + a);
            }
        } finally {
            pool.shutdown();
            pool.awaitTermination(10, TimeUnit.SECONDS);
        }
    }

    @Test
    void predictions_are_the_clamped_formula_and_unknown_users_get_mean_plus_item_bias() {
        ServingModel model = KitchenModel.build();
        for (String user : new String[] {"ana", "ben", "cy", "dee", "eve", "zoe"}) {
            int u = model.userIndex(user);
            int reference = model.hasFactors(u) ? u : -1;
            for (int i = 0; i < model.numItems(); i++) {
                double want = KitchenModel.clamp(KitchenModel.rawPrediction(reference, i));
                assertEquals(want, Predictor.predict(model, u, i), SCORE_TOLERANCE, user + " item " + i);
            }
        }
    }
}
