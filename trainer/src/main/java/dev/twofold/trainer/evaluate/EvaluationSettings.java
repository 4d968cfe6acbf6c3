package dev.twofold.trainer.evaluate;

import dev.twofold.trainer.parallel.Workers;

/**
 * How held-out figures are computed, validated on construction.
 *
 * @param k                  list length for precision@k, recall@k, nDCG@k, coverage
 * @param relevance          a held-out rating at or above this is relevant
 * @param coldMaxRatings     users with at most this many training ratings form the cold segment
 * @param scaleMin           predictions are clamped to [scaleMin, scaleMax] for RMSE and MAE
 * @param scaleMax           see scaleMin
 * @param threads            worker threads for ranking; figures do not depend on it
 */
public record EvaluationSettings(int k, float relevance, int coldMaxRatings, float scaleMin, float scaleMax, int threads) {

    public static final int DEFAULT_K = 10;
    public static final float DEFAULT_RELEVANCE = 4f;
    public static final int DEFAULT_COLD_MAX_RATINGS = 5;
    public static final int MAX_K = 1000;

    public EvaluationSettings {
        if (k < 1 || k > MAX_K) {
            throw new IllegalArgumentException("k " + k + " outside 1.." + MAX_K);
        }
        if (!(scaleMin < scaleMax) || !Float.isFinite(scaleMin) || !Float.isFinite(scaleMax)) {
            throw new IllegalArgumentException("rating scale " + scaleMin + ".." + scaleMax + " must be finite with min < max");
        }
        if (!(relevance >= scaleMin && relevance <= scaleMax)) {
            throw new IllegalArgumentException("relevance threshold " + relevance + " outside the rating scale "
                    + scaleMin + ".." + scaleMax);
        }
        if (coldMaxRatings < 0) {
            throw new IllegalArgumentException("cold segment bound " + coldMaxRatings + " must be ≥ 0");
        }
        if (threads < 1 || threads > Workers.MAX_THREADS) {
            throw new IllegalArgumentException("threads " + threads + " outside 1.." + Workers.MAX_THREADS);
        }
    }

    /** k 10, relevant from 4, cold up to 5 training ratings, on the given scale, one thread. */
    public static EvaluationSettings defaults(float scaleMin, float scaleMax) {
        return new EvaluationSettings(DEFAULT_K, DEFAULT_RELEVANCE, DEFAULT_COLD_MAX_RATINGS, scaleMin, scaleMax, 1);
    }

    public EvaluationSettings withThreads(int value) {
        return new EvaluationSettings(k, relevance, coldMaxRatings, scaleMin, scaleMax, value);
    }
}
