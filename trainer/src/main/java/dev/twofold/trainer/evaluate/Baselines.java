package dev.twofold.trainer.evaluate;

import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.FittedModel;
import dev.twofold.trainer.fit.Solver;
import dev.twofold.trainer.fit.TrainingData;

/** Fits and judges the baselines every report carries. */
public final class Baselines {

    private Baselines() {
    }

    /**
     * @param evaluator  judges on the held-out rows
     * @param data       the training data the model was fitted on
     * @param settings   the model's settings: the biases-only baseline uses them at rank 0 without
     *                   trust, the without-trust baseline uses them with {@link Coupling#NONE}
     * @param popularity per-item popularity for the most-popular ranking
     * @param solver     fits the baselines (the model's own solver)
     */
    public static BaselineFigures evaluate(Evaluator evaluator, TrainingData data, FitSettings settings,
            float[] popularity, Solver solver) {
        SegmentFigures globalMean = evaluator.errors(Scorer.constant(data.ratings().mean()));
        FittedModel biases = solver.fit(data, settings.withRank(0).withBiases(true).withCoupling(Coupling.NONE));
        SegmentFigures biasesOnly = evaluator.evaluate(Scorer.of(biases));
        SegmentFigures mostPopular = evaluator.ranking(Scorer.byItem(popularity));
        SegmentFigures withoutTrust = null;
        if (settings.coupling() != Coupling.NONE) {
            withoutTrust = evaluator.evaluate(Scorer.of(solver.fit(data, settings.withCoupling(Coupling.NONE))));
        }
        return new BaselineFigures(globalMean, biasesOnly, mostPopular, withoutTrust);
    }
}
