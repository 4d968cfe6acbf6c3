package dev.twofold.trainer.evaluate;

import static org.junit.jupiter.api.Assertions.assertEquals;

import org.junit.jupiter.api.Test;

class RankingMetricsTest {

    /** The paper prints two decimals. */
    private static final double PAPER_PRINT_PRECISION = 0.005 + 1e-9;
    /** Printed to three decimals. */
    private static final double THREE_DECIMALS = 0.0005 + 1e-9;
    private static final double EXACT = 1e-12;

    /**
     * The gain vector of the worked example in K. Järvelin, J. Kekäläinen, "Cumulated Gain-Based
     * Evaluation of IR Techniques", ACM TOIS 20(4), 2002, with its CG vector and its DCG vector for
     * log base 2 (all three from memory; the DCG arithmetic was re-done by hand: 5 + 3/log2 3 = 6.89,
     * + 1/log2 6 = 7.28, + 2/log2 7 = 7.99, + 2/log2 8 = 8.66, + 3/log2 9 = 9.61).
     */
    private static final double[] JK_GAINS = {3, 2, 3, 0, 0, 1, 2, 2, 3, 0};
    private static final double[] JK_CG = {3, 5, 8, 8, 8, 9, 11, 13, 16, 16};
    private static final double[] JK_DCG_BASE_2 = {3, 5, 6.89, 6.89, 6.89, 7.28, 7.99, 8.66, 9.61, 9.61};

    @Test
    void cumulated_gain_of_the_published_example() {
        double[] cg = RankingMetrics.cumulatedGain(JK_GAINS);
        for (int r = 0; r < JK_CG.length; r++) {
            assertEquals(JK_CG[r], cg[r], EXACT, "CG[" + (r + 1) + "]");
        }
    }

    @Test
    void discounted_cumulated_gain_of_the_published_example() {
        double[] dcg = RankingMetrics.discountedCumulatedGain(JK_GAINS, 2);
        for (int r = 0; r < JK_DCG_BASE_2.length; r++) {
            assertEquals(JK_DCG_BASE_2[r], dcg[r], PAPER_PRINT_PRECISION, "DCG[" + (r + 1) + "]");
        }
    }

    @Test
    void dcg_with_log_rank_plus_one_discount_matches_the_common_worked_example() {
        // Graded relevances 3,2,3,0,1,2 give DCG6 = 6.861; the ideal order of that example's relevant
        // set, 3,3,3,2,2,2, gives 8.740, so nDCG6 = 0.785 (the Wikipedia article "Discounted cumulative
        // gain", from memory; re-computed by hand: 3 + 2/1.585 + 3/2 + 0 + 1/2.585 + 2/2.807).
        assertEquals(6.861, RankingMetrics.dcgAt(new double[] {3, 2, 3, 0, 1, 2}, 6), THREE_DECIMALS);
        assertEquals(8.740, RankingMetrics.dcgAt(new double[] {3, 3, 3, 2, 2, 2}, 6), THREE_DECIMALS);
        assertEquals(0.785, RankingMetrics.dcgAt(new double[] {3, 2, 3, 0, 1, 2}, 6)
                / RankingMetrics.dcgAt(new double[] {3, 3, 3, 2, 2, 2}, 6), THREE_DECIMALS);
    }

    @Test
    void precision_recall_and_average_precision_with_relevant_items_at_ranks_one_three_and_five() {
        // From the definitions (C. D. Manning, P. Raghavan, H. Schütze, Introduction to Information
        // Retrieval, 2008, ch. 8): P@1 = 1, P@3 = 2/3, P@5 = 3/5, AP = (1 + 2/3 + 3/5) / 3 = 0.7556.
        boolean[] hits = {true, false, true, false, true, false, false, false, false, false};
        assertEquals(1.0, RankingMetrics.precisionAt(hits, 10, 1), EXACT);
        assertEquals(2.0 / 3, RankingMetrics.precisionAt(hits, 10, 3), EXACT);
        assertEquals(3.0 / 5, RankingMetrics.precisionAt(hits, 10, 5), EXACT);
        assertEquals(0.3, RankingMetrics.precisionAt(hits, 10, 10), EXACT);
        assertEquals((1 + 2.0 / 3 + 3.0 / 5) / 3, RankingMetrics.averagePrecisionAt(hits, 10, 10, 3), EXACT);
        assertEquals(0.7556, RankingMetrics.averagePrecisionAt(hits, 10, 10, 3), 0.00005);
        // two more relevant items never ranked: recall 3/5 and AP divided by 5
        assertEquals(0.6, RankingMetrics.recallAt(hits, 10, 10, 5), EXACT);
        assertEquals((1 + 2.0 / 3 + 3.0 / 5) / 5, RankingMetrics.averagePrecisionAt(hits, 10, 10, 5), EXACT);
    }

    @Test
    void ndcg_is_one_for_an_ideal_list_and_uses_the_binary_gain() {
        boolean[] ideal = {true, true, false, false};
        assertEquals(1.0, RankingMetrics.ndcgAt(ideal, 4, 4, 2), EXACT);
        // relevant at ranks 1 and 3 of 2 relevant: (1 + 1/log2 4) / (1 + 1/log2 3)
        boolean[] hits = {true, false, true, false};
        double expected = (1 + 0.5) / (1 + 1 / (Math.log(3) / Math.log(2)));
        assertEquals(expected, RankingMetrics.ndcgAt(hits, 4, 4, 2), EXACT);
        assertEquals(RankingMetrics.dcgAt(new double[] {1, 0, 1, 0}, 4) / RankingMetrics.dcgAt(new double[] {1, 1}, 4),
                RankingMetrics.ndcgAt(hits, 4, 4, 2), EXACT);
    }

    @Test
    void a_short_list_still_divides_precision_by_k() {
        boolean[] hits = {true, true, false};
        assertEquals(0.2, RankingMetrics.precisionAt(hits, 2, 10), EXACT);
    }
}
