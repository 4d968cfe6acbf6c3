package dev.twofold.trainer.evaluate;

import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.FittedModel;
import dev.twofold.trainer.fit.Solver;
import dev.twofold.trainer.fit.TrainingData;
import java.util.ArrayList;
import java.util.List;

/**
 * The baselines every report carries, fitted on the model's training data: the global mean, biases
 * only, most popular, and the same model without trust (when the model has trust).
 */
public final class Baselines {

    private final double globalMean;
    private final FittedModel biasesOnly;
    private final float[] popularity;
    private final FittedModel withoutTrust;

    private Baselines(double globalMean, FittedModel biasesOnly, float[] popularity, FittedModel withoutTrust) {
        this.globalMean = globalMean;
        this.biasesOnly = biasesOnly;
        this.popularity = popularity;
        this.withoutTrust = withoutTrust;
    }

    /**
     * @param data       the training data the model was fitted on
     * @param settings   the model's settings: the biases-only baseline uses them at rank 0 without
     *                   trust, the without-trust baseline uses them with {@link Coupling#NONE}
     * @param popularity per-item popularity for the most-popular ranking
     * @param solver     fits the baselines (the model's own solver)
     */
    public static Baselines fit(TrainingData data, FitSettings settings, float[] popularity, Solver solver) {
        FittedModel biases = solver.fit(data, settings.withRank(0).withBiases(true).withCoupling(Coupling.NONE));
        FittedModel withoutTrust = settings.coupling() == Coupling.NONE ? null
                : solver.fit(data, settings.withCoupling(Coupling.NONE));
        return new Baselines(data.ratings().mean(), biases, popularity, withoutTrust);
    }

    /** Figures of the model, the baselines and the live model (if any). */
    public record Judgement(SegmentFigures model, BaselineFigures baselines, SegmentFigures live) {
    }

    /**
     * Judges the model, these baselines and the live model on the same held-out rows, ranking all of
     * them in one pass ({@link Evaluator#ranking(List)}).
     *
     * @param live the live model's scorer, or null when there is none
     */
    public Judgement judge(Evaluator evaluator, Scorer model, Scorer live) {
        Scorer biases = Scorer.of(biasesOnly);
        Scorer popular = Scorer.byItem(popularity);
        Scorer noTrust = withoutTrust == null ? null : Scorer.of(withoutTrust);
        List<Scorer> ranked = new ArrayList<>(List.of(model, biases, popular));
        if (noTrust != null) {
            ranked.add(noTrust);
        }
        if (live != null) {
            ranked.add(live);
        }
        List<SegmentFigures> ranking = evaluator.ranking(ranked);
        SegmentFigures modelFigures = evaluator.errors(model).withRanking(ranking.get(0));
        BaselineFigures baselines = new BaselineFigures(
                evaluator.errors(Scorer.constant(globalMean)),
                evaluator.errors(biases).withRanking(ranking.get(1)),
                ranking.get(2),
                noTrust == null ? null : evaluator.errors(noTrust).withRanking(ranking.get(3)));
        SegmentFigures liveFigures = live == null ? null
                : evaluator.errors(live).withRanking(ranking.get(ranking.size() - 1));
        return new Judgement(modelFigures, baselines, liveFigures);
    }
}
