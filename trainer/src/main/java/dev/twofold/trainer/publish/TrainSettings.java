package dev.twofold.trainer.publish;

import dev.twofold.db.ingest.RatingScale;
import dev.twofold.trainer.evaluate.EvaluationSettings;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.split.PerUserHoldout;

/**
 * Everything a retrain needs, validated on construction.
 *
 * @param fit              the fit settings of the model
 * @param holdout          expected share of each user's ratings held out for evaluation, in [0.01, 0.9]
 * @param splitSeed        seeds the held-out choice; kept fixed across retrains so every model is
 *                         judged on the same rows and the live model was not trained on them
 * @param scale            ratings scale; predictions are clamped to it
 * @param relevance        a held-out rating at or above this is relevant for ranking figures; also
 *                         the threshold of the popularity stored with the model
 * @param k                list length of the ranking figures
 * @see PublishSettings what happens to the model once it is evaluated (promotion, gate, retention)
 */
public record TrainSettings(FitSettings fit, double holdout, long splitSeed, RatingScale scale, float relevance, int k) {

    public static final double DEFAULT_HOLDOUT = PerUserHoldout.DEFAULT_FRACTION;
    public static final long DEFAULT_SPLIT_SEED = 20_260_101L;
    public static final double MIN_HOLDOUT = 0.01;
    public static final double MAX_HOLDOUT = 0.9;

    public TrainSettings {
        if (fit == null) {
            throw new IllegalArgumentException("fit settings are required");
        }
        if (!(holdout >= MIN_HOLDOUT && holdout <= MAX_HOLDOUT)) {
            throw new IllegalArgumentException("holdout " + holdout + " outside " + MIN_HOLDOUT + ".." + MAX_HOLDOUT);
        }
        if (scale == null) {
            throw new IllegalArgumentException("rating scale is required");
        }
        // validates k and the relevance threshold against the scale
        new EvaluationSettings(k, relevance, EvaluationSettings.DEFAULT_COLD_MAX_RATINGS, scale.min(), scale.max(),
                fit.threads());
    }

    public static TrainSettings defaults() {
        return new TrainSettings(FitSettings.defaults(), DEFAULT_HOLDOUT, DEFAULT_SPLIT_SEED, RatingScale.DEFAULT,
                EvaluationSettings.DEFAULT_RELEVANCE, EvaluationSettings.DEFAULT_K);
    }

    public TrainSettings withFit(FitSettings value) {
        return new TrainSettings(value, holdout, splitSeed, scale, relevance, k);
    }

    public TrainSettings withHoldout(double value) {
        return new TrainSettings(fit, value, splitSeed, scale, relevance, k);
    }

    public TrainSettings withRanking(float relevanceThreshold, int listLength) {
        return new TrainSettings(fit, holdout, splitSeed, scale, relevanceThreshold, listLength);
    }

    EvaluationSettings evaluation() {
        return new EvaluationSettings(k, relevance, EvaluationSettings.DEFAULT_COLD_MAX_RATINGS, scale.min(), scale.max(),
                fit.threads());
    }
}
