package dev.twofold.trainer.fit;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import dev.twofold.trainer.evaluate.EvaluationSettings;
import dev.twofold.trainer.evaluate.Evaluator;
import dev.twofold.trainer.evaluate.Scorer;
import dev.twofold.trainer.planted.CommunitySpec;
import dev.twofold.trainer.planted.CookingCommunity;
import dev.twofold.trainer.planted.PlantedCommunity;
import dev.twofold.trainer.split.PerUserHoldout;
import dev.twofold.trainer.split.Split;
import java.util.ArrayList;
import java.util.List;
import java.util.stream.Stream;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.Arguments;
import org.junit.jupiter.params.provider.MethodSource;

/** The checks every solver passes under every coupling. */
class SolverContractTest {

    /**
     * Each update is an exact minimiser (or an exact line search) in double precision; storing the
     * result as float32 perturbs it by ~1e-7 relative, which can raise L only at second order.
     */
    private static final double FLOAT_STORAGE_SLACK = 1e-9;
    /** Factors are stored as float32, so the residual norm is good to about 1e-6 relative; allow 1e-4. */
    private static final double OPTIMUM_TOLERANCE = 1e-4;
    /** On a small planted community every solver must cut the global mean's held-out RMSE by a fifth. */
    private static final double MIN_GAIN_OVER_GLOBAL_MEAN = 0.20;

    static Stream<Arguments> solversAndCouplings() {
        List<Arguments> all = new ArrayList<>();
        for (SolverKind solver : SolverKind.values()) {
            for (Coupling coupling : Coupling.values()) {
                all.add(Arguments.of(solver, coupling));
            }
        }
        return all.stream();
    }

    private static FitSettings settings(Coupling coupling) {
        float weight = switch (coupling) {
            case SHARED -> 0.5f;
            case NEIGHBOUR -> 3f;
            case NONE -> 0f;
        };
        return FitSettings.defaults().withRank(4).withLambda(0.1f).withCoupling(coupling).withTrust(weight, 5f);
    }

    @ParameterizedTest(name = "{0} with {1} coupling")
    @MethodSource("solversAndCouplings")
    void objective_never_increases_between_epochs(SolverKind solver, Coupling coupling) {
        TrainingData data = RandomProblems.problem(60, 40, 0.15, 5, 21);
        FitSettings s = settings(coupling).withEpochs(25);
        List<EpochReport> reports = new ArrayList<>();
        FittedModel model = solver.create().fit(data, s, reports::add);
        assertEquals(s.epochs(), reports.size());
        assertEquals(reports, model.history());
        for (int e = 1; e < reports.size(); e++) {
            double before = reports.get(e - 1).objective();
            double after = reports.get(e).objective();
            assertTrue(after <= before * (1 + FLOAT_STORAGE_SLACK), "epoch " + (e + 1) + ": " + before + " -> " + after);
            assertEquals(0, reports.get(e).failedSolves());
        }
        assertTrue(reports.get(reports.size() - 1).objective() < 0.9 * reports.get(0).objective(), "the fit made progress");
        assertEquals(Objective.value(data, model), reports.get(reports.size() - 1).objective(), 0.0);
    }

    @ParameterizedTest(name = "{0} with {1} coupling")
    @MethodSource("solversAndCouplings")
    void biases_only_fit_never_increases_the_objective(SolverKind solver, Coupling coupling) {
        TrainingData data = RandomProblems.problem(60, 40, 0.15, 3, 23);
        FitSettings s = settings(coupling).withRank(0).withEpochs(8);
        List<EpochReport> reports = new ArrayList<>();
        solver.create().fit(data, s, reports::add);
        for (int e = 1; e < reports.size(); e++) {
            assertTrue(reports.get(e).objective() <= reports.get(e - 1).objective() * (1 + FLOAT_STORAGE_SLACK));
        }
    }

    @ParameterizedTest(name = "{0} with {1} coupling")
    @MethodSource("solversAndCouplings")
    void fully_observed_fit_without_regularisation_reaches_the_eckart_young_optimum(SolverKind solver,
            Coupling coupling) {
        // The 4×3 matrix of Example 9.3 in Zafarani, Abbasi, Liu, Social Media Mining (2014): singular
        // values 8.0265, 4.3886, 2.0777 (LowRankOptimumTest checks them against EJML's SVD).
        assertReachesOptimum(solver, coupling, LowRankOptimumTest.BOOK_MATRIX, 2, 3);
        assertReachesOptimum(solver, coupling, LowRankOptimumTest.BOOK_MATRIX, 1, 4);
        assertReachesOptimum(solver, coupling, LowRankOptimumTest.noisyLowRank(40, 25, 11), 3, 5);
    }

    private static void assertReachesOptimum(SolverKind solver, Coupling coupling, double[][] x, int rank, long seed) {
        int m = x.length;
        int n = x[0].length;
        int[] u = new int[m * n];
        int[] i = new int[m * n];
        float[] v = new float[m * n];
        double[][] stored = new double[m][n];
        for (int a = 0, at = 0; a < m; a++) {
            for (int b = 0; b < n; b++, at++) {
                u[at] = a;
                i[at] = b;
                v[at] = (float) x[a][b];
                stored[a][b] = v[at];
            }
        }
        double optimum = LowRankOptimumTest.eckartYoung(stored, rank);
        // trust takes part (its weight is positive) but there are no edges, so the optimum is the same
        FitSettings s = settings(coupling).withRank(rank).withLambda(0f).withBiases(false).withEpochs(
                solver == SolverKind.ALS ? 200 : 1500).withSeed(seed);
        RatingMatrix ratings = RatingMatrix.of(m, n, u, i, v);
        FittedModel model = solver.create().fit(new TrainingData(ratings, TrustGraph.empty(m), null), s);
        double residual = 0;
        for (int a = 0; a < m; a++) {
            for (int b = 0; b < n; b++) {
                double e = stored[a][b] - model.score(a, b);
                residual += e * e;
            }
        }
        assertEquals(optimum, Math.sqrt(residual), OPTIMUM_TOLERANCE * optimum, "rank " + rank + " residual");
    }

    @ParameterizedTest(name = "{0} with {1} coupling")
    @MethodSource("solversAndCouplings")
    void one_and_two_threads_give_bitwise_identical_factors(SolverKind solver, Coupling coupling) {
        TrainingData data = RandomProblems.problem(2100, 600, 0.01, 6, 31);
        FitSettings s = settings(coupling).withRank(6).withEpochs(2);
        FittedModel one = solver.create().fit(data, s.withThreads(1));
        FittedModel two = solver.create().fit(data, s.withThreads(2));
        assertTrue(data.ratings().numUsers() >= 2 * 1024, "large enough to run the user loops in parallel");
        assertArrayEquals(one.userFactors(), two.userFactors());
        assertArrayEquals(one.userBias(), two.userBias());
        assertArrayEquals(one.itemFactors(), two.itemFactors());
        assertArrayEquals(one.itemBias(), two.itemBias());
        assertArrayEquals(one.trustFactors(), two.trustFactors());
        assertEquals(one.history(), two.history());
    }

    @ParameterizedTest(name = "{0} with {1} coupling")
    @MethodSource("solversAndCouplings")
    void recovers_a_small_planted_community(SolverKind solver, Coupling coupling) {
        PlantedCommunity c = CookingCommunity.generate(CommunitySpec.defaults().withSize(400, 150).withSeed(3));
        int m = c.numCooks();
        int n = c.numRecipes();
        Split split = new PerUserHoldout(0.2, 1).split(m, c.ratingUser(), c.ratingItem(), null);
        RatingMatrix train = RatingMatrix.of(m, n, c.ratingUser(), c.ratingItem(), c.rating(), split.train());
        RatingMatrix test = RatingMatrix.of(m, n, c.ratingUser(), c.ratingItem(), c.rating(), split.test());
        TrustGraph trust = TrustGraph.of(m, c.truster(), c.trustee(), c.trustWeight());
        FitSettings s = FitSettings.defaults().withCoupling(coupling).withTrust(coupling.defaultTrustWeight(),
                FitSettings.DEFAULT_TRUST_ALPHA).withEpochs(solver == SolverKind.ALS ? 15 : 30);
        FittedModel model = solver.create().fit(new TrainingData(train, trust, null), s);
        Evaluator evaluator = new Evaluator(train, test, EvaluationSettings.defaults(1f, 5f));
        double rmse = evaluator.errors(Scorer.of(model)).overall().rmse();
        double mean = evaluator.errors(Scorer.constant(train.mean())).overall().rmse();
        assertTrue(rmse <= (1 - MIN_GAIN_OVER_GLOBAL_MEAN) * mean, "model " + rmse + " vs global mean " + mean);
    }
}
