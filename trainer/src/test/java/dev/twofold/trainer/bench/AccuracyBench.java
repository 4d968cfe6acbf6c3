package dev.twofold.trainer.bench;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import dev.twofold.trainer.evaluate.EvaluationSettings;
import dev.twofold.trainer.evaluate.Evaluator;
import dev.twofold.trainer.evaluate.Scorer;
import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.FittedModel;
import dev.twofold.trainer.fit.SolverKind;
import dev.twofold.trainer.fit.TrainingData;
import dev.twofold.trainer.planted.CommunitySpec;
import dev.twofold.trainer.planted.CookingCommunity;
import dev.twofold.trainer.planted.PlantedCommunity;
import dev.twofold.trainer.split.PerUserHoldout;
import dev.twofold.trainer.split.Split;
import java.util.Arrays;
import java.util.Locale;

/**
 * Accuracy on the planted demo community (default size, seed 7): for each coupling × solver, the
 * warm users' (≥ 15 training ratings) held-out RMSE and its ratio to the noise floor, the cold users'
 * (≤ 3 training ratings) RMSE and the cut against the same solver without trust, and precision@10.
 *
 * <p>Arguments (all optional): {@code rank=8 lambda=0.02 shared=0.3 neighbour=8 biasPrior=2 epochs=20 seed=7
 * cooks=2000 recipes=500 solvers=als,ccd,greedy couplings=shared,neighbour,none} (defaults: those of
 * {@link FitSettings#defaults()}).
 * Run with (the heap settings matter: the trainer benches hold a million ratings and their models)
 *
 * <pre>JAVA_OPTS="-Xms2g -Xmx8g" deploy/bench trainer dev.twofold.trainer.bench.AccuracyBench [name=value ...]</pre>
 */
public final class AccuracyBench {

    static final int WARM_MIN_RATINGS = 15;
    static final int COLD_MAX_RATINGS = 3;

    private AccuracyBench() {
    }

    public static void main(String[] args) {
        Args a = new Args(args);
        CommunitySpec spec = CommunitySpec.defaults().withSize(a.integer("cooks", CommunitySpec.DEFAULT_COOKS),
                a.integer("recipes", CommunitySpec.DEFAULT_RECIPES)).withSeed(a.integer("seed", 7));
        PlantedCommunity c = CookingCommunity.generate(spec);
        int m = c.numCooks();
        int n = c.numRecipes();
        Split split = new PerUserHoldout(0.2, 20_260_101L).split(m, c.ratingUser(), c.ratingItem(), null);
        RatingMatrix train = RatingMatrix.of(m, n, c.ratingUser(), c.ratingItem(), c.rating(), split.train());
        RatingMatrix test = RatingMatrix.of(m, n, c.ratingUser(), c.ratingItem(), c.rating(), split.test());
        TrustGraph trust = TrustGraph.of(m, c.truster(), c.trustee(), c.trustWeight());
        TrainingData data = new TrainingData(train, trust, null);
        Evaluator evaluator = new Evaluator(train, test, EvaluationSettings.defaults(1f, 5f).withThreads(2));
        int[] warmRows = Arrays.stream(split.test()).filter(p -> train.userCount(c.ratingUser()[p]) >= WARM_MIN_RATINGS)
                .toArray();
        int[] coldRows = Arrays.stream(split.test()).filter(p -> train.userCount(c.ratingUser()[p]) <= COLD_MAX_RATINGS)
                .toArray();
        double warmFloor = c.noiseFloorRmse(warmRows);
        System.out.printf(Locale.ROOT, "community: %d cooks, %d recipes, %d ratings (%d train), %d follows; "
                + "warm rows %d (noise floor %.4f), cold rows %d (noise floor %.4f)%n", m, n, c.numRatings(), train.nnz(),
                c.numFollows(), warmRows.length, warmFloor, coldRows.length, c.noiseFloorRmse(coldRows));
        System.out.printf(Locale.ROOT, "| solver | coupling | warm RMSE | warm / floor | cold RMSE | cold cut vs none | RMSE | precision@10 | fit s |%n");
        System.out.printf(Locale.ROOT, "|---|---|---|---|---|---|---|---|---|%n");
        for (String solverName : a.text("solvers", "als,ccd,greedy").split(",")) {
            SolverKind solver = SolverKind.parse(solverName);
            double coldNone = Double.NaN;
            String[] couplings = a.text("couplings", "none,shared,neighbour").split(",");
            for (String couplingName : couplings) {
                Coupling coupling = Coupling.parse(couplingName);
                float weight = coupling == Coupling.SHARED ? a.real("shared", Coupling.SHARED.defaultTrustWeight())
                        : coupling == Coupling.NEIGHBOUR ? a.real("neighbour", Coupling.NEIGHBOUR.defaultTrustWeight()) : 0f;
                FitSettings s = FitSettings.defaults().withRank(a.integer("rank", FitSettings.DEFAULT_RANK))
                        .withLambda(a.real("lambda", FitSettings.DEFAULT_LAMBDA)).withCoupling(coupling)
                        .withTrust(weight, a.real("alpha", FitSettings.DEFAULT_TRUST_ALPHA))
                        .withEpochs(a.integer("epochs", FitSettings.DEFAULT_EPOCHS))
                        .withBiasPrior(a.real("biasPrior", FitSettings.DEFAULT_BIAS_PRIOR)).withThreads(2);
                long t0 = System.nanoTime();
                FittedModel model = solver.create().fit(data, s);
                double seconds = (System.nanoTime() - t0) / 1e9;
                Scorer scorer = Scorer.of(model);
                double warm = evaluator.errors(scorer, u -> train.userCount(u) >= WARM_MIN_RATINGS).rmse();
                double cold = evaluator.errors(scorer, u -> train.userCount(u) <= COLD_MAX_RATINGS).rmse();
                if (coupling == Coupling.NONE) {
                    coldNone = cold;
                }
                double overall = evaluator.errors(scorer).overall().rmse();
                double precision = evaluator.ranking(scorer).overall().precision();
                System.out.printf(Locale.ROOT, "| %s | %s | %.4f | %.3f | %.4f | %s | %.4f | %.4f | %.1f |%n", solver.label(),
                        coupling.label(), warm, warm / warmFloor, cold,
                        Double.isNaN(coldNone) || coupling == Coupling.NONE ? "-"
                                : String.format(Locale.ROOT, "%.1f%%", 100 * (1 - cold / coldNone)),
                        overall, precision, seconds);
            }
        }
    }
}
