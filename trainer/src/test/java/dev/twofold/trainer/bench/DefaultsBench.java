package dev.twofold.trainer.bench;

import dev.twofold.db.progress.Progress;
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
import dev.twofold.trainer.publish.TrainSettings;
import dev.twofold.trainer.split.PerUserHoldout;
import dev.twofold.trainer.split.Split;
import dev.twofold.trainer.sweep.Sweep;
import dev.twofold.trainer.sweep.SweepPoint;
import dev.twofold.trainer.sweep.SweepResult;
import java.util.Locale;

/**
 * How the defaults were chosen: on the demo community ({@code twofold demo-data} defaults), the
 * ratings are split as {@code train} splits them, the training rows split again into fitting and
 * validation rows, and for each coupling and trust weight the rank × λ grid is swept with early
 * stopping. Prints the best validation RMSE per coupling and weight. The held-out rows are not used.
 *
 * <p>Arguments: {@code ranks=4,8,16 lambdas=0.02,0.04,0.08 shared=0.03,0.1,0.3 neighbour=0.5,2,8 solver=als
 * couplings=shared,neighbour,none biasPriors=2 epochs=40 patience=3} (each bias prior γ is tried with every
 * coupling and weight; epochs is the most a fit may run).
 * Run with (the heap settings matter: the trainer benches hold a million ratings and their models)
 *
 * <pre>JAVA_OPTS="-Xms2g -Xmx8g" deploy/bench trainer dev.twofold.trainer.bench.DefaultsBench [name=value ...]</pre>
 */
public final class DefaultsBench {

    private DefaultsBench() {
    }

    public static void main(String[] args) {
        Args a = new Args(args);
        PlantedCommunity c = CookingCommunity.generate(CommunitySpec.defaults());
        int m = c.numCooks();
        int n = c.numRecipes();
        Split outer = new PerUserHoldout(0.2, TrainSettings.DEFAULT_SPLIT_SEED).split(m, c.ratingUser(), c.ratingItem(), null);
        int[] rows = outer.train();
        int[] u = new int[rows.length];
        int[] i = new int[rows.length];
        for (int x = 0; x < rows.length; x++) {
            u[x] = c.ratingUser()[rows[x]];
            i[x] = c.ratingItem()[rows[x]];
        }
        Split inner = new PerUserHoldout(0.2, TrainSettings.DEFAULT_SPLIT_SEED + 1).split(m, u, i, null);
        int[] fitRows = new int[inner.train().length];
        int[] valRows = new int[inner.test().length];
        for (int x = 0; x < fitRows.length; x++) {
            fitRows[x] = rows[inner.train()[x]];
        }
        for (int x = 0; x < valRows.length; x++) {
            valRows[x] = rows[inner.test()[x]];
        }
        RatingMatrix fit = RatingMatrix.of(m, n, c.ratingUser(), c.ratingItem(), c.rating(), fitRows);
        RatingMatrix validation = RatingMatrix.of(m, n, c.ratingUser(), c.ratingItem(), c.rating(), valRows);
        TrustGraph trust = TrustGraph.of(m, c.truster(), c.trustee(), c.trustWeight());
        TrainingData data = Sweep.withValidation(new TrainingData(fit, trust, null), validation, 1f, 5f);
        int[] ranks = parseInts(a.text("ranks", "4,8,16"));
        float[] lambdas = parseFloats(a.text("lambdas", "0.02,0.04,0.08"));
        SolverKind solver = SolverKind.parse(a.text("solver", "als"));
        System.out.printf(Locale.ROOT, "demo community: %,d ratings; fitting %,d, validation %,d%n", c.numRatings(),
                fit.nnz(), validation.nnz());
        System.out.println("| coupling | trust weight | bias prior | best rank | best lambda | best epoch | validation RMSE"
                + " | cold (≤ 5) validation RMSE | precision@10 |");
        System.out.println("|---|---|---|---|---|---|---|---|---|");
        float[] priors = parseFloats(a.text("biasPriors", Float.toString(FitSettings.DEFAULT_BIAS_PRIOR)));
        for (String name : a.text("couplings", "shared,neighbour,none").split(",")) {
            Coupling coupling = Coupling.parse(name);
            String weights = coupling == Coupling.SHARED ? a.text("shared", "0.03,0.1,0.3")
                    : coupling == Coupling.NEIGHBOUR ? a.text("neighbour", "0.5,2,8") : "0";
            for (float w : parseFloats(weights)) {
                for (float prior : priors) {
                    FitSettings base = FitSettings.defaults().withCoupling(coupling).withTrust(w, FitSettings.DEFAULT_TRUST_ALPHA)
                            .withBiasPrior(prior).withEpochs(a.integer("epochs", 40)).withPatience(a.integer("patience", 3)).withThreads(2);
                    SweepResult result = Sweep.run(data, validation, solver.create(), base, ranks, lambdas,
                            EvaluationSettings.defaults(1f, 5f).withThreads(2), true, Progress.silent());
                    SweepPoint best = result.best();
                    FittedModel model = solver.create().fit(data, base.withRank(best.rank()).withLambda(best.lambda())
                            .withEpochs(best.bestEpoch()).withPatience(0));
                    Evaluator evaluator = new Evaluator(fit, validation, EvaluationSettings.defaults(1f, 5f));
                    double cold = evaluator.errors(Scorer.of(model)).cold().rmse();
                    System.out.printf(Locale.ROOT, "| %s | %s | %s | %d | %s | %d | %.4f | %.4f | %.4f |%n", coupling.label(), w,
                            prior, best.rank(), best.lambda(), best.bestEpoch(), best.validationRmse(), cold, best.precision());
                }
            }
        }
    }

    static int[] parseInts(String text) {
        String[] parts = text.split(",");
        int[] v = new int[parts.length];
        for (int x = 0; x < parts.length; x++) {
            v[x] = Integer.parseInt(parts[x]);
        }
        return v;
    }

    static float[] parseFloats(String text) {
        String[] parts = text.split(",");
        float[] v = new float[parts.length];
        for (int x = 0; x < parts.length; x++) {
            v[x] = Float.parseFloat(parts[x]);
        }
        return v;
    }
}
