package dev.twofold.trainer.evaluate;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
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
import java.util.ArrayList;
import java.util.Arrays;
import java.util.BitSet;
import java.util.Comparator;
import java.util.List;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/**
 * The evaluator ranks in groups of users and blocks of items, several scorers in one pass, with a
 * blocked product and a heap that skips most items; this checks, figure for figure and bit for bit,
 * that it gives what the straightforward computation gives: for each user, every item's score from
 * {@link FittedModel#scoreItems} (one dot product per item), the items rated in training removed, a
 * full sort, the top k, the metrics of {@link RankingMetrics}, summed in user order.
 */
class OnePassRankingTest {

    /** 1,100 recipes: two full blocks of items and a part block, so block edges are crossed. */
    private static final int RECIPES = 1_100;
    private static final int COOKS = 400;
    private static final long SEED = 31;
    /** 0 is the biases-only baseline; 1..9 cover every remainder of the four-factor passes. */
    private static final int[] RANKS = {0, 1, 2, 3, 4, 5, 6, 7, 9};
    private static final int MODELS = RANKS.length;

    private static RatingMatrix train;
    private static RatingMatrix test;
    private static TrainingData data;
    private static List<Scorer> scorers;
    private static List<Reference> references;

    /** A scorer and how the straightforward computation scores one user's items. */
    private record Reference(String name, Scorer scorer, RowScores row) {
    }

    @FunctionalInterface
    private interface RowScores {
        void score(int user, double[] out);
    }

    @BeforeAll
    static void plantAndFit() {
        PlantedCommunity c = CookingCommunity.generate(CommunitySpec.defaults().withSize(COOKS, RECIPES).withSeed(SEED));
        Split split = new PerUserHoldout(0.3, SEED).split(c.numCooks(), c.ratingUser(), c.ratingItem(), null);
        train = RatingMatrix.of(c.numCooks(), c.numRecipes(), c.ratingUser(), c.ratingItem(), c.rating(), split.train());
        test = RatingMatrix.of(c.numCooks(), c.numRecipes(), c.ratingUser(), c.ratingItem(), c.rating(), split.test());
        data = new TrainingData(train, TrustGraph.of(c.numCooks(), c.truster(), c.trustee(), c.trustWeight()),
                null);
        references = new ArrayList<>();
        for (int rank : RANKS) {
            FitSettings settings = FitSettings.defaults().withRank(rank).withEpochs(3)
                    .withCoupling(rank == 0 ? Coupling.NONE : Coupling.NEIGHBOUR);
            FittedModel model = SolverKind.ALS.create().fit(data, settings);
            references.add(new Reference("rank " + rank, Scorer.of(model), model::scoreItems));
        }
        float[] popularity = train.countAtLeast(4f);
        Scorer popular = Scorer.byItem(popularity);
        references.add(new Reference("most popular (many ties)", popular, (u, out) -> {
            for (int i = 0; i < out.length; i++) {
                out[i] = popularity[i];
            }
        }));
        Scorer coarse = (u, i) -> (u * 7 + i * 13) % 5; // five distinct scores: ties everywhere
        references.add(new Reference("coarse", coarse, (u, out) -> {
            for (int i = 0; i < out.length; i++) {
                out[i] = coarse.score(u, i);
            }
        }));
        scorers = references.stream().map(Reference::scorer).toList();
    }

    @Test
    void one_pass_over_all_scorers_gives_exactly_the_straightforward_figures() {
        for (int k : new int[] {1, 10, 37}) {
            EvaluationSettings settings = new EvaluationSettings(k, 4f, 5, 1f, 5f, 2);
            List<SegmentFigures> fast = new Evaluator(train, test, settings).ranking(scorers);
            for (int s = 0; s < references.size(); s++) {
                SegmentFigures expected = reference(references.get(s).row(), settings);
                assertEquals(expected, fast.get(s), references.get(s).name() + ", k " + k);
            }
            assertTrue(fast.get(0).cold().rankedUsers() > 0, "the planted community has cold cooks to rank");
        }
    }

    @Test
    void each_scorer_alone_gives_what_it_gives_among_others() {
        EvaluationSettings settings = new EvaluationSettings(10, 4f, 5, 1f, 5f, 1);
        Evaluator evaluator = new Evaluator(train, test, settings);
        List<SegmentFigures> together = evaluator.ranking(scorers);
        for (int s = 0; s < scorers.size(); s++) {
            assertEquals(together.get(s), evaluator.ranking(scorers.get(s)), references.get(s).name());
        }
    }

    @Test
    void figures_do_not_depend_on_the_thread_count() {
        EvaluationSettings one = new EvaluationSettings(10, 4f, 5, 1f, 5f, 1);
        List<SegmentFigures> expected = new Evaluator(train, test, one).ranking(scorers);
        for (int threads : new int[] {2, 3, 5}) {
            assertEquals(expected, new Evaluator(train, test, one.withThreads(threads)).ranking(scorers),
                    threads + " threads");
        }
    }

    @Test
    void a_model_scores_any_range_of_items_bit_for_bit_as_one_dot_product_per_item() {
        int[] users = {0, 17, 399};
        double[][] out = new double[users.length][RECIPES];
        double[] row = new double[RECIPES];
        for (Reference model : references.subList(0, MODELS)) {
            for (int[] range : new int[][] {{0, 512}, {512, 1024}, {1024, RECIPES}, {3, 700}, {1099, RECIPES}}) {
                model.scorer().scoreBlock(users, users.length, range[0], range[1], out);
                for (int g = 0; g < users.length; g++) {
                    model.row().score(users[g], row);
                    for (int i = range[0]; i < range[1]; i++) {
                        assertEquals(Double.doubleToRawLongBits(row[i]), Double.doubleToRawLongBits(out[g][i - range[0]]),
                                model.name() + ", user " + users[g] + ", item " + i + " of " + Arrays.toString(range));
                    }
                }
            }
        }
    }

    @Test
    void judging_model_baselines_and_live_model_together_gives_each_the_figures_it_gets_alone() {
        Evaluator evaluator = new Evaluator(train, test, new EvaluationSettings(10, 4f, 5, 1f, 5f, 2));
        FitSettings settings = FitSettings.defaults().withRank(4).withEpochs(3);
        float[] popularity = train.countAtLeast(4f);
        Baselines baselines = Baselines.fit(data, settings, popularity, SolverKind.ALS.create());
        Scorer model = scorers.get(4);
        Scorer live = scorers.get(MODELS - 1);
        Baselines.Judgement judged = baselines.judge(evaluator, model, live);

        FittedModel biases = SolverKind.ALS.create().fit(data, settings.withRank(0).withCoupling(Coupling.NONE));
        FittedModel withoutTrust = SolverKind.ALS.create().fit(data, settings.withCoupling(Coupling.NONE));
        assertEquals(evaluator.evaluate(model), judged.model());
        assertEquals(evaluator.evaluate(live), judged.live());
        assertEquals(evaluator.errors(Scorer.constant(train.mean())), judged.baselines().globalMean());
        assertEquals(evaluator.evaluate(Scorer.of(biases)), judged.baselines().biasesOnly());
        assertEquals(evaluator.ranking(Scorer.byItem(popularity)), judged.baselines().mostPopular());
        assertEquals(evaluator.evaluate(Scorer.of(withoutTrust)), judged.baselines().withoutTrust());
        assertEquals(null, baselines.judge(evaluator, model, null).live());
    }

    /** The straightforward computation: full sort per user, figures summed in user order. */
    private static SegmentFigures reference(RowScores scores, EvaluationSettings settings) {
        int n = train.numItems();
        int k = settings.k();
        double[] row = new double[n];
        Sums overall = new Sums(n);
        Sums cold = new Sums(n);
        for (int u = 0; u < train.numUsers(); u++) {
            int relevant = 0;
            for (int at = test.userStart()[u]; at < test.userStart()[u + 1]; at++) {
                if (test.userValues()[at] >= settings.relevance()) {
                    relevant++;
                }
            }
            if (relevant == 0) {
                continue;
            }
            scores.score(u, row);
            BitSet rated = new BitSet(n);
            for (int at = train.userStart()[u]; at < train.userStart()[u + 1]; at++) {
                rated.set(train.userItems()[at]);
            }
            List<Integer> candidates = new ArrayList<>();
            for (int i = 0; i < n; i++) {
                if (!rated.get(i)) {
                    candidates.add(i);
                }
            }
            candidates.sort(Comparator.<Integer>comparingDouble(i -> -row[i]).thenComparingInt(i -> i));
            int length = Math.min(k, candidates.size());
            boolean[] hits = new boolean[k];
            for (int r = 0; r < length; r++) {
                hits[r] = test.get(u, candidates.get(r)) >= settings.relevance();
            }
            double[] figures = {RankingMetrics.precisionAt(hits, length, k), RankingMetrics.recallAt(hits, length, k, relevant),
                RankingMetrics.ndcgAt(hits, length, k, relevant), RankingMetrics.averagePrecisionAt(hits, length, k, relevant)};
            List<Integer> top = candidates.subList(0, length);
            overall.add(figures, top);
            if (train.userCount(u) <= settings.coldMaxRatings()) {
                cold.add(figures, top);
            }
        }
        return new SegmentFigures(overall.figures(), cold.figures());
    }

    private static final class Sums {
        final double[] sum = new double[4];
        final BitSet shown;
        final int n;
        int users;

        Sums(int n) {
            this.n = n;
            this.shown = new BitSet(n);
        }

        void add(double[] figures, List<Integer> top) {
            users++;
            for (int f = 0; f < 4; f++) {
                sum[f] += figures[f];
            }
            top.forEach(shown::set);
        }

        Figures figures() {
            if (users == 0) {
                return Figures.EMPTY;
            }
            return new Figures(0, Double.NaN, Double.NaN, users, sum[0] / users, sum[1] / users, sum[2] / users,
                    sum[3] / users, shown.cardinality() / (double) n);
        }
    }
}
