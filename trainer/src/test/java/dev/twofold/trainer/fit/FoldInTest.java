package dev.twofold.trainer.fit;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Random;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.factory.LinearSolverFactory_DDRM;
import org.ejml.interfaces.linsol.LinearSolverDense;
import org.junit.jupiter.api.Test;

/**
 * Fold-in against a direct least-squares solve with EJML's QR: the user's objective written as one
 * tall system whose rows are the ratings, every cell of the user's trust row (scaled by √(τ c_uv))
 * and the ridge rows √(λ ñ) I, with √(λ ñ + γ) for the bias (γ the bias prior).
 */
class FoldInTest {

    /** Both are double-precision solves of a well-conditioned problem (normal equations vs QR). */
    private static final double AGREEMENT = 1e-8;

    @Test
    void fold_in_with_trust_equals_the_direct_least_squares_solution() {
        check(true, true, 61);
        check(true, true, 62);
    }

    @Test
    void fold_in_without_trust_equals_the_direct_least_squares_solution() {
        check(true, false, 63);
    }

    @Test
    void fold_in_without_biases_equals_the_direct_least_squares_solution() {
        check(false, true, 64);
    }

    private static void check(boolean biases, boolean withTrust, long seed) {
        Random random = new Random(seed);
        int k = 4;
        int items = 12;
        int users = 9;
        float mu = 3.4f;
        float lambda = 0.2f;
        float tau = 0.6f;
        float alpha = 7f;
        float gamma = 1.5f;
        float[] q = RandomProblems.gaussian(items * k, 0.7, random);
        float[] bi = RandomProblems.gaussian(items, 0.4, random);
        float[] z = RandomProblems.gaussian(users * k, 0.7, random);
        int[] rated = {1, 4, 5, 9, 11};
        float[] ratings = {4, 2, 5, 3.5f, 1};
        int[] trustees = {0, 3, 7};
        float[] weights = {1f, 0.5f, 0.25f};

        FoldIn foldIn = new FoldIn(k, biases, mu, lambda, q, bi, withTrust ? z : null,
                withTrust ? FoldIn.gram(z, users, k) : null, tau, alpha).withBiasPrior(gamma);
        FoldIn.Scratch scratch = foldIn.newScratch();
        assertTrue(foldIn.solve(rated, ratings, 0, rated.length, trustees, weights, 0, trustees.length, scratch));

        int dim = biases ? k + 1 : k;
        int rows = rated.length + (withTrust ? users : 0) + dim;
        DMatrixRMaj a = new DMatrixRMaj(rows, dim);
        DMatrixRMaj b = new DMatrixRMaj(rows, 1);
        int row = 0;
        for (int s = 0; s < rated.length; s++, row++) {
            for (int x = 0; x < k; x++) {
                a.set(row, x, q[rated[s] * k + x]);
            }
            if (biases) {
                a.set(row, k, 1.0);
            }
            b.set(row, 0, ratings[s] - (biases ? (double) mu + bi[rated[s]] : 0.0));
        }
        if (withTrust) {
            for (int v = 0; v < users; v++, row++) {
                double target = 0;
                double confidence = 1;
                for (int e = 0; e < trustees.length; e++) {
                    if (trustees[e] == v) {
                        target = 1;
                        confidence = 1 + (double) alpha * weights[e];
                    }
                }
                double scale = Math.sqrt(tau * confidence);
                for (int x = 0; x < k; x++) {
                    a.set(row, x, scale * z[v * k + x]);
                }
                b.set(row, 0, scale * target);
            }
        }
        double ridge = Math.sqrt((double) lambda * rated.length);
        for (int x = 0; x < dim; x++, row++) {
            a.set(row, x, x == k ? Math.sqrt((double) lambda * rated.length + gamma) : ridge);
        }
        LinearSolverDense<DMatrixRMaj> ls = LinearSolverFactory_DDRM.leastSquares(rows, dim);
        assertTrue(ls.setA(a));
        DMatrixRMaj expected = new DMatrixRMaj(dim, 1);
        ls.solve(b, expected);

        for (int x = 0; x < k; x++) {
            assertEquals(expected.get(x, 0), scratch.factor(x), AGREEMENT, "factor " + x);
        }
        assertEquals(biases ? expected.get(k, 0) : 0.0, scratch.bias(), AGREEMENT, "bias");
    }

    @Test
    void a_user_with_no_ratings_is_still_regularised_and_gets_a_finite_answer() {
        Random random = new Random(65);
        int k = 3;
        float[] q = RandomProblems.gaussian(5 * k, 1, random);
        float[] z = RandomProblems.gaussian(4 * k, 1, random);
        FoldIn foldIn = new FoldIn(k, true, 3f, 0.1f, q, new float[5], z, FoldIn.gram(z, 4, k), 1f, 10f);
        FoldIn.Scratch scratch = foldIn.newScratch();
        assertTrue(foldIn.solve(new int[0], new float[0], 0, 0, new int[] {2}, new float[] {1f}, 0, 1, scratch));
        assertEquals(0.0, scratch.bias(), 0.0, "no ratings: the bias stays at its prior");
        double norm = 0;
        for (int x = 0; x < k; x++) {
            norm += scratch.factor(x) * scratch.factor(x);
        }
        assertTrue(norm > 0, "trust alone moves the factors");
    }

    @Test
    void a_failed_solve_is_reported_and_the_scratch_refuses_to_give_a_stale_answer() {
        float[] q = {1f, 0f, 1f, 0f}; // two items with identical factors, rank 2, λ = 0: singular
        FoldIn foldIn = new FoldIn(2, false, 0f, 0f, q, new float[2], null, null, 0f, 0f);
        FoldIn.Scratch scratch = foldIn.newScratch();
        assertFalse(foldIn.solve(new int[] {0, 1}, new float[] {3, 4}, 0, 2, scratch));
        assertThrows(IllegalStateException.class, scratch::bias);
    }
}
