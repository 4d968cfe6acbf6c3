package dev.twofold.trainer.evaluate;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.trainer.data.RatingMatrix;
import java.util.Random;
import org.junit.jupiter.api.Test;

class EvaluatorTest {

    private static final double EXACT = 1e-12;

    /**
     * 3 users × 6 items. Training: user 0 rated items 0,1; user 1 rated item 0 and items 1..5 (six
     * ratings, not cold); user 2 rated item 5. Held out: user 0 items 2 (5 stars), 3 (2 stars); user 2
     * item 4 (4 stars); user 1 nothing.
     */
    private static final RatingMatrix TRAIN = RatingMatrix.of(3, 6,
            new int[] {0, 0, 1, 1, 1, 1, 1, 1, 2},
            new int[] {0, 1, 0, 1, 2, 3, 4, 5, 5},
            new float[] {4, 4, 3, 3, 3, 3, 3, 3, 5});
    private static final RatingMatrix TEST = RatingMatrix.of(3, 6,
            new int[] {0, 0, 2},
            new int[] {2, 3, 4},
            new float[] {5, 2, 4});

    /** Scores item i as i (later items better) for every user. */
    private static final Scorer BY_INDEX = (user, item) -> item;

    @Test
    void errors_clamp_predictions_to_the_scale() {
        Evaluator evaluator = new Evaluator(TRAIN, TEST, new EvaluationSettings(2, 4f, 5, 1f, 5f, 1));
        // predictions: item 2 -> 2, item 3 -> 3, item 4 -> 4 (all inside 1..5)
        // errors 3, -1, 0: RMSE √(10/3), MAE 4/3
        SegmentFigures f = evaluator.errors(BY_INDEX);
        assertEquals(3, f.overall().rows());
        assertEquals(Math.sqrt(10.0 / 3), f.overall().rmse(), EXACT);
        assertEquals(4.0 / 3, f.overall().mae(), EXACT);
        // a scorer far outside the scale is clamped to 5: errors 0, -3, -1
        SegmentFigures high = evaluator.errors(Scorer.constant(9));
        assertEquals(Math.sqrt(10.0 / 3), high.overall().rmse(), EXACT);
        assertEquals(4.0 / 3, high.overall().mae(), EXACT);
    }

    @Test
    void ranking_scores_every_item_not_rated_in_training_and_averages_over_users_with_relevant_items() {
        Evaluator evaluator = new Evaluator(TRAIN, TEST, new EvaluationSettings(2, 4f, 5, 1f, 5f, 1));
        SegmentFigures f = evaluator.ranking(BY_INDEX);
        // user 0: candidates 2,3,4,5 -> top 2 = 5,4; relevant {2}: precision 0, recall 0, nDCG 0
        // user 2: candidates 0..4 -> top 2 = 4,3; relevant {4}: precision 1/2, recall 1, nDCG 1, AP 1
        // user 1 has no held-out ratings and is not ranked
        assertEquals(2, f.overall().rankedUsers());
        assertEquals(0.25, f.overall().precision(), EXACT);
        assertEquals(0.5, f.overall().recall(), EXACT);
        assertEquals(0.5, f.overall().ndcg(), EXACT);
        assertEquals(0.5, f.overall().map(), EXACT);
        // items shown: 5, 4, 3 of 6
        assertEquals(0.5, f.overall().coverage(), EXACT);
        // both ranked users have ≤ 5 training ratings: the cold segment is the same here
        assertEquals(f.overall(), f.cold());
    }

    @Test
    void cold_segment_holds_only_users_with_few_training_ratings() {
        Evaluator evaluator = new Evaluator(TRAIN, TEST, new EvaluationSettings(2, 4f, 1, 1f, 5f, 1));
        SegmentFigures f = evaluator.evaluate(BY_INDEX);
        assertEquals(1, f.cold().rows(), "only user 2 has ≤ 1 training rating");
        assertEquals(0.0, f.cold().rmse(), EXACT);
        assertEquals(1, f.cold().rankedUsers());
        assertEquals(0.5, f.cold().precision(), EXACT);
        assertEquals(2.0 / 6, f.cold().coverage(), EXACT);
        assertEquals(1, evaluator.coldUsersWithHeldOut());
    }

    @Test
    void figures_are_the_same_with_one_or_two_threads() {
        Random random = new Random(17);
        int m = 400;
        int n = 120;
        int[] u = new int[m * 12];
        int[] i = new int[m * 12];
        float[] v = new float[m * 12];
        for (int a = 0, at = 0; a < m; a++) {
            for (int b = 0; b < 12; b++, at++) {
                u[at] = a;
                i[at] = (a * 7 + b * 11) % n;
                v[at] = 1 + random.nextInt(5);
            }
        }
        int[] trainRows = new int[m * 9];
        int[] testRows = new int[m * 3];
        for (int a = 0, tr = 0, te = 0; a < m; a++) {
            for (int b = 0; b < 12; b++) {
                if (b < 9) {
                    trainRows[tr++] = a * 12 + b;
                } else {
                    testRows[te++] = a * 12 + b;
                }
            }
        }
        RatingMatrix train = RatingMatrix.of(m, n, u, i, v, trainRows);
        RatingMatrix test = RatingMatrix.of(m, n, u, i, v, testRows);
        float[] noise = new float[m * n];
        for (int x = 0; x < noise.length; x++) {
            noise[x] = random.nextFloat();
        }
        Scorer scorer = (user, item) -> noise[user * n + item];
        EvaluationSettings one = new EvaluationSettings(10, 4f, 5, 1f, 5f, 1);
        SegmentFigures a = new Evaluator(train, test, one).evaluate(scorer);
        SegmentFigures b = new Evaluator(train, test, one.withThreads(2)).evaluate(scorer);
        assertEquals(a, b);
        assertTrue(a.overall().rankedUsers() > 0);
    }
}
