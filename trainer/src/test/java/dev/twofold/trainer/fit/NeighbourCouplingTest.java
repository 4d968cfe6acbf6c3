package dev.twofold.trainer.fit;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import java.util.Random;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.EnumSource;

/**
 * A user with no ratings under neighbour coupling. Their part of the objective is
 * λ ‖p_x‖² + β ‖p_x − Σ_v w̄_xv p_v‖² (no one trusts them), minimised by the shrunk average
 * p_x = β / (β + λ) · Σ_v w̄_xv p_v of the trusted users' vectors.
 */
class NeighbourCouplingTest {

    /** Fold-in is one double-precision solve stored as float32. */
    private static final double CLOSED_FORM_AGREEMENT = 1e-6;
    /** After the fit has converged the row is its block's minimiser up to float32 storage and the last steps. */
    private static final double CONVERGED_AGREEMENT = 1e-4;
    private static final float LAMBDA = 0.1f;
    private static final float BETA = 2f;

    @ParameterizedTest(name = "{0}")
    @EnumSource(SolverKind.class)
    void a_user_without_ratings_gets_the_shrunk_average_of_the_users_they_trust(SolverKind solver) {
        TrainingData base = RandomProblems.problem(40, 30, 0.25, 3, 77);
        int x = 40; // a new user 40 with no ratings, trusting 3, 11 and 25 with weights 1, 0.5, 0.25
        RatingMatrix r = base.ratings();
        int[] u = new int[r.nnz()];
        int[] i = new int[r.nnz()];
        float[] v = new float[r.nnz()];
        for (int row = 0, at = 0; row < r.numUsers(); row++) {
            for (int e = r.userStart()[row]; e < r.userStart()[row + 1]; e++, at++) {
                u[at] = row;
                i[at] = r.userItems()[e];
                v[at] = r.userValues()[e];
            }
        }
        RatingMatrix ratings = RatingMatrix.of(41, 30, u, i, v);
        TrustGraph old = base.trust();
        int edges = old.numEdges();
        int[] from = new int[edges + 3];
        int[] to = new int[edges + 3];
        float[] w = new float[edges + 3];
        for (int a = 0, at = 0; a < 40; a++) {
            for (int e = old.outStart()[a]; e < old.outStart()[a + 1]; e++, at++) {
                from[at] = a;
                to[at] = old.trustees()[e];
                w[at] = old.outWeights()[e];
            }
        }
        int[] trusted = {3, 11, 25};
        float[] weights = {1f, 0.5f, 0.25f};
        for (int j = 0; j < 3; j++) {
            from[edges + j] = x;
            to[edges + j] = trusted[j];
            w[edges + j] = weights[j];
        }
        TrainingData data = new TrainingData(ratings, TrustGraph.of(41, from, to, w), null);
        FitSettings s = FitSettings.defaults().withRank(3).withLambda(LAMBDA).withCoupling(Coupling.NEIGHBOUR)
                .withTrust(BETA, 0f).withEpochs(solver == SolverKind.ALS ? 150 : 400);
        FittedModel model = solver.create().fit(data, s);
        double[] expected = shrunkAverage(model.userFactors(), 3, trusted, weights);
        for (int a = 0; a < 3; a++) {
            assertEquals(expected[a], model.userFactors()[x * 3 + a], CONVERGED_AGREEMENT, "factor " + a);
        }
        assertEquals(0f, model.userBias()[x], 0f, "no ratings, no bias");
        assertTrue(model.knownUsers().get(x), "a user who trusts someone is known under neighbour coupling");
    }

    @Test
    void fold_in_of_a_user_without_ratings_is_the_shrunk_average() {
        Random random = new Random(5);
        int k = 4;
        float[] q = RandomProblems.gaussian(10 * k, 0.7, random);
        float[] bi = RandomProblems.gaussian(10, 0.3, random);
        float[] p = RandomProblems.gaussian(8 * k, 0.9, random);
        FoldIn foldIn = FoldIn.withNeighbours(k, true, 3.5f, LAMBDA, q, bi, p, BETA);
        FoldIn.Scratch scratch = foldIn.newScratch();
        int[] trusted = {1, 4, 6};
        float[] weights = {0.5f, 1f, 1f};
        assertTrue(foldIn.solve(new int[0], new float[0], 0, 0, trusted, weights, 0, 3, scratch));
        double[] expected = shrunkAverage(p, k, trusted, weights);
        for (int a = 0; a < k; a++) {
            assertEquals(expected[a], scratch.factor(a), CLOSED_FORM_AGREEMENT, "factor " + a);
        }
        assertEquals(0.0, scratch.bias(), CLOSED_FORM_AGREEMENT);
    }

    /** β / (β + λ·1) · Σ_v (w_v / Σ w) p_v: the closed form from the objective (ñ = 1 without ratings). */
    private static double[] shrunkAverage(float[] p, int k, int[] trusted, float[] weights) {
        double total = 0;
        for (float w : weights) {
            total += w;
        }
        double[] avg = new double[k];
        for (int j = 0; j < trusted.length; j++) {
            for (int a = 0; a < k; a++) {
                avg[a] += weights[j] / total * p[trusted[j] * k + a];
            }
        }
        for (int a = 0; a < k; a++) {
            avg[a] *= BETA / (BETA + LAMBDA);
        }
        return avg;
    }
}
