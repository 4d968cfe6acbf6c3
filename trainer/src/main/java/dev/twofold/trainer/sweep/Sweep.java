package dev.twofold.trainer.sweep;

import dev.twofold.db.progress.Progress;
import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.evaluate.EvaluationSettings;
import dev.twofold.trainer.evaluate.Evaluator;
import dev.twofold.trainer.evaluate.Scorer;
import dev.twofold.trainer.fit.EpochReport;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.FittedModel;
import dev.twofold.trainer.fit.Solver;
import dev.twofold.trainer.fit.TrainingData;
import dev.twofold.trainer.fit.ValidationSet;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;

/**
 * Sensitivity of the fit to rank and λ: every (rank, λ) of a grid is fitted on the training rows with
 * early stopping on the validation rows, and judged there by RMSE and precision@k. The setting with
 * the lowest validation RMSE is the choice; ties (within {@link #TIE_RMSE}) go to the smaller rank,
 * then the larger λ, the simpler model.
 */
public final class Sweep {

    /** Default grid of {@code train} when no rank is given. */
    public static final int[] DEFAULT_RANKS = {4, 8, 16};
    /** Default grid of {@code train} when no λ is given. */
    public static final float[] DEFAULT_LAMBDAS = {0.01f, 0.02f, 0.04f};
    /** RMSE differences below this count as a tie. */
    public static final double TIE_RMSE = 1e-4;

    private Sweep() {
    }

    /**
     * @param fitData    training rows, trust, and the validation rows the fits stop early on
     * @param validation the validation rows as a matrix (for precision@k over all unrated items)
     * @param base       fit settings of every point (rank and λ replaced; patience ≥ 1 advised)
     * @param evaluation k and relevance of precision@k
     * @param ranking    also compute precision@k (ranks every unrated item for every validation user:
     *                   O(users·items·k) per setting); without it precision is NaN
     */
    public static SweepResult run(TrainingData fitData, RatingMatrix validation, Solver solver, FitSettings base,
            int[] ranks, float[] lambdas, EvaluationSettings evaluation, boolean ranking, Progress progress) {
        if (ranks.length == 0 || lambdas.length == 0) {
            throw new IllegalArgumentException("a sweep needs at least one rank and one lambda");
        }
        if (fitData.validation().isEmpty()) {
            throw new IllegalArgumentException("a sweep needs validation rows; the data has too few ratings to hold any out");
        }
        Evaluator evaluator = new Evaluator(fitData.ratings(), validation, evaluation);
        List<SweepPoint> points = new ArrayList<>();
        Progress.Task task = progress.start("sweep", (long) ranks.length * lambdas.length);
        for (int rank : ranks) {
            for (float lambda : lambdas) {
                FitSettings s = base.withRank(rank).withLambda(lambda);
                long t0 = System.nanoTime();
                FittedModel model = solver.fit(fitData, s);
                double seconds = (System.nanoTime() - t0) / 1e9;
                int best = bestEpoch(model.history());
                double rmse = fitData.validation().rmse(model);
                double precision = ranking ? evaluator.ranking(Scorer.of(model)).overall().precision() : Double.NaN;
                points.add(new SweepPoint(rank, lambda, rmse, precision, best, model.history().size(), seconds));
                task.advanceAndLog(points.size(), String.format(Locale.ROOT,
                        "rank %d, lambda %s: validation RMSE %.4f at epoch %d of %d", rank, SweepResult.number(lambda), rmse,
                        best, model.history().size()));
            }
        }
        task.finish("");
        return new SweepResult(points, evaluation.k());
    }

    /** The sweep on rows already split: training rows and validation rows of one matrix space. */
    public static TrainingData withValidation(TrainingData train, RatingMatrix validation, float scaleMin, float scaleMax) {
        int rows = validation.nnz();
        int[] u = new int[rows];
        int[] i = new int[rows];
        float[] v = new float[rows];
        int at = 0;
        for (int user = 0; user < validation.numUsers(); user++) {
            for (int e = validation.userStart()[user]; e < validation.userStart()[user + 1]; e++, at++) {
                u[at] = user;
                i[at] = validation.userItems()[e];
                v[at] = validation.userValues()[e];
            }
        }
        return new TrainingData(train.ratings(), train.trust(), new ValidationSet(u, i, v, scaleMin, scaleMax));
    }

    /** 1-based epoch with the lowest validation RMSE (the last epoch without validation). */
    public static int bestEpoch(List<EpochReport> history) {
        int best = history.size();
        double rmse = Double.POSITIVE_INFINITY;
        for (EpochReport e : history) {
            if (e.validationRmse() < rmse) {
                rmse = e.validationRmse();
                best = e.epoch();
            }
        }
        return best;
    }
}
