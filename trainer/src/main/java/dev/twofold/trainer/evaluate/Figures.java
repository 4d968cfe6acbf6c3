package dev.twofold.trainer.evaluate;

/**
 * Held-out figures of one scorer on one set of users. A figure that was not computed (ranking for
 * the global mean, errors for a popularity list) or has no rows is NaN.
 *
 * @param rows        held-out ratings scored for RMSE and MAE
 * @param rmse        root mean squared error of the clamped predictions
 * @param mae         mean absolute error of the clamped predictions
 * @param rankedUsers users with at least one relevant held-out rating, over whom ranking figures average
 * @param precision   mean precision@k
 * @param recall      mean recall@k
 * @param ndcg        mean nDCG@k (binary gain, log2(rank + 1) discount)
 * @param map         mean average precision@k
 * @param coverage    share of the catalogue's items that appear in at least one ranked user's top k
 */
public record Figures(int rows, double rmse, double mae, int rankedUsers, double precision, double recall, double ndcg,
        double map, double coverage) {

    static final Figures EMPTY = new Figures(0, Double.NaN, Double.NaN, 0, Double.NaN, Double.NaN, Double.NaN,
            Double.NaN, Double.NaN);

    /** The error figures of this with the ranking figures of {@code ranking}. */
    Figures withRanking(Figures ranking) {
        return new Figures(rows, rmse, mae, ranking.rankedUsers, ranking.precision, ranking.recall, ranking.ndcg,
                ranking.map, ranking.coverage);
    }
}
