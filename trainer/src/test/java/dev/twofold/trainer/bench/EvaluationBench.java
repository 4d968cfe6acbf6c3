package dev.twofold.trainer.bench;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import dev.twofold.trainer.evaluate.EvaluationSettings;
import dev.twofold.trainer.evaluate.Evaluator;
import dev.twofold.trainer.evaluate.Figures;
import dev.twofold.trainer.evaluate.Scorer;
import dev.twofold.trainer.evaluate.SegmentFigures;
import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.FittedModel;
import dev.twofold.trainer.fit.Solver;
import dev.twofold.trainer.fit.SolverKind;
import dev.twofold.trainer.fit.TrainingData;
import dev.twofold.trainer.planted.CommunitySpec;
import dev.twofold.trainer.planted.CookingCommunity;
import dev.twofold.trainer.planted.PlantedCommunity;
import dev.twofold.trainer.split.PerUserHoldout;
import dev.twofold.trainer.split.Split;
import java.lang.management.ManagementFactory;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;

/**
 * The held-out evaluation of a nightly retrain at the size of the contract, without the database: a
 * cooking community of 40,000 cooks and 20,000 recipes (about 1.9 M ratings), 20% of each cook's
 * ratings held out, and the five scorers a retrain judges — the model (default settings), the
 * biases-only, most-popular and without-trust baselines, and a "live" model (the same settings,
 * another seed) — each ranked over all items its user did not rate in training: one scorer at a
 * time, then all five in one pass (checking that both give the same figures). Prints the times per
 * round. Run with
 *
 * <pre>JAVA_OPTS="-Xms2g -Xmx8g" deploy/bench trainer dev.twofold.trainer.bench.EvaluationBench [cooks=40000 recipes=20000 threads=2 rounds=3]</pre>
 */
public final class EvaluationBench {

    private static final long SEED = 20_261_201L;

    private EvaluationBench() {
    }

    public static void main(String[] args) {
        Args a = new Args(args);
        int threads = a.integer("threads", 2);
        int rounds = a.integer("rounds", 3);
        PlantedCommunity c = CookingCommunity.generate(CommunitySpec.defaults()
                .withSize(a.integer("cooks", 40_000), a.integer("recipes", 20_000)).withSeed(SEED));
        Split split = new PerUserHoldout(0.2, SEED).split(c.numCooks(), c.ratingUser(), c.ratingItem(), null);
        RatingMatrix train = RatingMatrix.of(c.numCooks(), c.numRecipes(), c.ratingUser(), c.ratingItem(), c.rating(),
                split.train());
        RatingMatrix test = RatingMatrix.of(c.numCooks(), c.numRecipes(), c.ratingUser(), c.ratingItem(), c.rating(),
                split.test());
        TrainingData data = new TrainingData(train, TrustGraph.of(c.numCooks(), c.truster(), c.trustee(), c.trustWeight()),
                null);
        Solver solver = SolverKind.ALS.create();
        FitSettings settings = FitSettings.defaults().withThreads(threads).withEpochs(a.integer("epochs", 8));
        long t0 = System.nanoTime();
        FittedModel model = solver.fit(data, settings);
        FittedModel live = solver.fit(data, settings.withSeed(settings.seed() + 1));
        FittedModel withoutTrust = solver.fit(data, settings.withCoupling(Coupling.NONE));
        FittedModel biases = solver.fit(data, settings.withRank(0).withCoupling(Coupling.NONE));
        float[] popularity = train.countAtLeast(4f);
        System.out.printf(Locale.ROOT, "%,d cooks, %,d recipes, %,d training and %,d held-out ratings; four fits %.1f s%n",
                c.numCooks(), c.numRecipes(), train.nnz(), test.nnz(), (System.nanoTime() - t0) / 1e9);
        Evaluator evaluator = new Evaluator(train, test, EvaluationSettings.defaults(1f, 5f).withThreads(threads));
        List<Scorer> scorers = List.of(Scorer.of(model), Scorer.of(biases), Scorer.byItem(popularity),
                Scorer.of(withoutTrust), Scorer.of(live));
        for (int round = 1; round <= rounds; round++) {
            long c0 = cpu();
            long t = System.nanoTime();
            List<SegmentFigures> apart = new ArrayList<>();
            for (Scorer s : scorers) {
                apart.add(evaluator.ranking(s));
            }
            long t1 = System.nanoTime();
            long c1 = cpu();
            List<SegmentFigures> together = evaluator.ranking(scorers);
            long t2 = System.nanoTime();
            long c2 = cpu();
            for (Scorer s : scorers) {
                evaluator.errors(s);
            }
            long t3 = System.nanoTime();
            Figures m = together.get(0).overall();
            System.out.printf(Locale.ROOT, "round %d: ranking five scorers one at a time %.2f s (%.2f s CPU), in one pass"
                    + " %.2f s (%.2f s CPU; same figures: %s); errors of all %.2f s; %,d users ranked, model precision@10"
                    + " %.4f%n", round, (t1 - t) / 1e9, (c1 - c0) / 1e9, (t2 - t1) / 1e9, (c2 - c1) / 1e9,
                    apart.equals(together), (t3 - t2) / 1e9, m.rankedUsers(), m.precision());
        }
    }

    /** CPU time of this JVM, all threads: on a shared machine it bounds what idle cores would take. */
    private static long cpu() {
        return ((com.sun.management.OperatingSystemMXBean) ManagementFactory.getOperatingSystemMXBean()).getProcessCpuTime();
    }
}
