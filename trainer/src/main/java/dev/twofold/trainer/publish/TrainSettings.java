package dev.twofold.trainer.publish;

import dev.twofold.db.ingest.RatingScale;
import dev.twofold.trainer.evaluate.EvaluationSettings;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.SolverKind;
import dev.twofold.trainer.split.PerUserHoldout;
import dev.twofold.trainer.split.SplitMethod;

/**
 * Everything a retrain needs, validated on construction.
 *
 * @param fit              the fit settings of the model (rank and λ are replaced by a sweep's choice
 *                         when {@code sweepRanks} or {@code sweepLambdas} are given)
 * @param holdout          expected share of each user's ratings held out for evaluation, in [0.01, 0.9]
 * @param splitSeed        seeds the held-out choice; kept fixed across retrains so every model is
 *                         judged on the same rows and the live model was not trained on them
 * @param scale            ratings scale; predictions are clamped to it
 * @param relevance        a held-out rating at or above this is relevant for ranking figures; also
 *                         the threshold of the popularity stored with the model
 * @param k                list length of the ranking figures
 * @param solver           the solver of the model and its baselines
 * @param split            how held-out (and validation) ratings are chosen
 * @param patience         early stopping: epochs without a better validation RMSE before a fit stops;
 *                         the final model is then fitted for the best epoch count. 0 runs
 *                         {@code fit.epochs()} epochs and needs no validation split unless a sweep runs
 * @param sweepRanks       ranks to choose from on the validation split; empty to use {@code fit.rank()}
 * @param sweepLambdas     λ values to choose from; empty to use {@code fit.lambda()}
 * @see PublishSettings what happens to the model once it is evaluated (promotion, gate, retention)
 */
public record TrainSettings(FitSettings fit, double holdout, long splitSeed, RatingScale scale, float relevance, int k,
        SolverKind solver, SplitMethod split, int patience, int[] sweepRanks,
        float[] sweepLambdas) {

    public static final double DEFAULT_HOLDOUT = PerUserHoldout.DEFAULT_FRACTION;
    public static final long DEFAULT_SPLIT_SEED = 20_260_101L;
    public static final double MIN_HOLDOUT = 0.01;
    public static final double MAX_HOLDOUT = 0.9;
    public static final SolverKind DEFAULT_SOLVER = SolverKind.ALS;
    public static final SplitMethod DEFAULT_SPLIT = SplitMethod.USER;
    public static final int DEFAULT_PATIENCE = 2;
    public static final int MAX_PATIENCE = 1000;
    /** The validation split inside the training rows uses the split seed plus this. */
    static final long VALIDATION_SEED_OFFSET = 1;

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
        if (solver == null || split == null) {
            throw new IllegalArgumentException("solver and split are required");
        }
        if (patience < 0 || patience > MAX_PATIENCE) {
            throw new IllegalArgumentException("patience " + patience + " outside 0.." + MAX_PATIENCE);
        }
        sweepRanks = sweepRanks == null ? new int[0] : sweepRanks.clone();
        sweepLambdas = sweepLambdas == null ? new float[0] : sweepLambdas.clone();
        for (int r : sweepRanks) {
            fit.withRank(r); // validates
        }
        for (float l : sweepLambdas) {
            fit.withLambda(l);
        }
        // validates k and the relevance threshold against the scale
        new EvaluationSettings(k, relevance, EvaluationSettings.DEFAULT_COLD_MAX_RATINGS, scale.min(), scale.max(),
                fit.threads());
    }

    /** Defaults: the default fit, 20% held out per user, ALS, early stopping with patience 2, no sweep. */
    public static TrainSettings defaults() {
        return new TrainSettings(FitSettings.defaults(), DEFAULT_HOLDOUT, DEFAULT_SPLIT_SEED, RatingScale.DEFAULT,
                EvaluationSettings.DEFAULT_RELEVANCE, EvaluationSettings.DEFAULT_K,
                DEFAULT_SOLVER, DEFAULT_SPLIT, DEFAULT_PATIENCE, null, null);
    }

    public TrainSettings withFit(FitSettings value) {
        return new TrainSettings(value, holdout, splitSeed, scale, relevance, k, solver, split, patience,
                sweepRanks, sweepLambdas);
    }

    public TrainSettings withHoldout(double value) {
        return new TrainSettings(fit, value, splitSeed, scale, relevance, k, solver, split, patience,
                sweepRanks, sweepLambdas);
    }

    public TrainSettings withRanking(float relevanceThreshold, int listLength) {
        return new TrainSettings(fit, holdout, splitSeed, scale, relevanceThreshold, listLength, solver,
                split, patience, sweepRanks, sweepLambdas);
    }

    public TrainSettings withSolver(SolverKind value) {
        return new TrainSettings(fit, holdout, splitSeed, scale, relevance, k, value, split, patience,
                sweepRanks, sweepLambdas);
    }

    public TrainSettings withSplit(SplitMethod value) {
        return new TrainSettings(fit, holdout, splitSeed, scale, relevance, k, solver, value, patience,
                sweepRanks, sweepLambdas);
    }

    public TrainSettings withPatience(int value) {
        return new TrainSettings(fit, holdout, splitSeed, scale, relevance, k, solver, split, value,
                sweepRanks, sweepLambdas);
    }

    /** Choose rank from {@code ranks} and λ from {@code lambdas} (either may be empty: keep the fit's). */
    public TrainSettings withSweep(int[] ranks, float[] lambdas) {
        return new TrainSettings(fit, holdout, splitSeed, scale, relevance, k, solver, split, patience,
                ranks, lambdas);
    }

    /** True when rank or λ is to be chosen on the validation split. */
    public boolean sweeps() {
        return sweepRanks.length > 0 || sweepLambdas.length > 0;
    }

    /** k, relevance, the cold segment and the scale of the held-out figures. */
    public EvaluationSettings evaluation() {
        return new EvaluationSettings(k, relevance, EvaluationSettings.DEFAULT_COLD_MAX_RATINGS, scale.min(), scale.max(),
                fit.threads());
    }
}
