package dev.twofold.trainer.fit;

import static org.junit.jupiter.api.Assertions.assertEquals;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import java.util.Arrays;
import org.junit.jupiter.api.Test;

/**
 * The objective with the Gram trick against a brute-force evaluation over a dense trust matrix, and
 * its gradient (built from the solver's normal equations) against finite differences. The settings
 * carry the default bias prior γ, so its term is checked too.
 */
class ObjectiveTest {

    /** Both evaluations sum the same terms in double precision. */
    private static final double VALUE_AGREEMENT = 1e-10;
    /**
     * L is quadratic in each single coordinate, so a central difference is exact up to rounding: the
     * objective (~1e2) is summed in double, so differences are good to ~1e-12 / h.
     */
    private static final double GRADIENT_AGREEMENT = 1e-6;
    private static final float STEP = 1f / 64;

    private static final FitSettings SHARED = FitSettings.defaults().withRank(3).withLambda(0.3f).withCoupling(Coupling.SHARED)
            .withTrust(0.7f, 4f);

    @Test
    void gram_trick_objective_equals_the_sum_over_every_cell_of_a_dense_trust_matrix() {
        TrainingData data = RandomProblems.problem(6, 5, 0.5, 2, 3);
        for (long seed = 1; seed <= 3; seed++) {
            FittedModel model = RandomProblems.randomModel(data, SHARED, 0.8, seed);
            double brute = bruteForce(data, model);
            assertEquals(brute, Objective.value(data, model), VALUE_AGREEMENT * brute);
        }
    }

    @Test
    void gradient_matches_central_differences_with_shared_trust_factors() {
        TrainingData data = RandomProblems.problem(6, 5, 0.5, 2, 5);
        checkGradient(data, RandomProblems.randomModel(data, SHARED, 0.8, 9));
    }

    @Test
    void gradient_matches_central_differences_with_neighbour_regularisation() {
        TrainingData data = RandomProblems.problem(6, 5, 0.5, 3, 7);
        FitSettings neighbour = SHARED.withCoupling(Coupling.NEIGHBOUR).withTrust(1.3f, 0f);
        checkGradient(data, RandomProblems.randomModel(data, neighbour, 0.8, 12));
    }

    @Test
    void neighbour_objective_equals_the_term_by_term_sum() {
        TrainingData data = RandomProblems.problem(7, 5, 0.5, 3, 4);
        FitSettings neighbour = SHARED.withCoupling(Coupling.NEIGHBOUR).withTrust(1.3f, 0f);
        for (long seed = 1; seed <= 3; seed++) {
            FittedModel model = RandomProblems.randomModel(data, neighbour, 0.8, seed);
            double brute = bruteForce(data, model);
            assertEquals(brute, Objective.value(data, model), VALUE_AGREEMENT * brute);
        }
    }

    @Test
    void gradient_matches_central_differences_without_trust() {
        TrainingData data = RandomProblems.problem(6, 5, 0.5, 2, 6);
        FitSettings none = SHARED.withCoupling(Coupling.NONE);
        checkGradient(data, RandomProblems.randomModel(data, none, 0.8, 10));
    }

    @Test
    void gradient_with_respect_to_users_vanishes_after_a_fit_because_users_are_solved_last() {
        TrainingData data = RandomProblems.problem(30, 20, 0.3, 4, 8);
        FittedModel model = new AlsSolver().fit(data, SHARED.withEpochs(5));
        Objective.Gradient g = Objective.gradient(data, model);
        double scale = Objective.value(data, model);
        // Float32 storage of the solved rows leaves a residual gradient of order 1e-7 × row scale.
        for (double x : g.userFactors()) {
            assertEquals(0, x, 1e-5 * scale);
        }
        for (double x : g.userBias()) {
            assertEquals(0, x, 1e-5 * scale);
        }
    }

    private static void checkGradient(TrainingData data, FittedModel model) {
        Objective.Gradient g = Objective.gradient(data, model);
        checkBlock(data, model, model.userFactors(), g.userFactors());
        checkBlock(data, model, model.userBias(), g.userBias());
        checkBlock(data, model, model.itemFactors(), g.itemFactors());
        checkBlock(data, model, model.itemBias(), g.itemBias());
        if (model.trustFactors() != null) {
            checkBlock(data, model, model.trustFactors(), g.trustFactors());
        }
    }

    private static void checkBlock(TrainingData data, FittedModel model, float[] params, double[] gradient) {
        for (int x = 0; x < params.length; x++) {
            float keep = params[x];
            float up = keep + STEP;
            float down = keep - STEP;
            params[x] = up;
            double fUp = bruteForce(data, model);
            params[x] = down;
            double fDown = bruteForce(data, model);
            params[x] = keep;
            double numeric = (fUp - fDown) / ((double) up - down);
            assertEquals(numeric, gradient[x], GRADIENT_AGREEMENT * (1 + Math.abs(numeric)), "coordinate " + x);
        }
    }

    /** L evaluated term by term, with T as a dense m×m matrix and every cell weighted. */
    static double bruteForce(TrainingData data, FittedModel model) {
        FitSettings s = model.settings();
        RatingMatrix r = data.ratings();
        TrustGraph t = data.trust();
        int m = r.numUsers();
        int n = r.numItems();
        int k = model.rank();
        float[] p = model.userFactors();
        float[] q = model.itemFactors();
        float[] z = model.trustFactors();
        double total = 0;
        for (int u = 0; u < m; u++) {
            for (int i = 0; i < n; i++) {
                float rating = r.get(u, i);
                if (!Float.isNaN(rating)) {
                    double pred = (double) model.globalMean() + model.userBias()[u] + model.itemBias()[i];
                    for (int a = 0; a < k; a++) {
                        pred += (double) p[u * k + a] * q[i * k + a];
                    }
                    total += (rating - pred) * (rating - pred);
                }
            }
        }
        if (s.sharesFactors()) {
            double[][] target = new double[m][m];
            double[][] confidence = new double[m][m];
            for (double[] row : confidence) {
                Arrays.fill(row, 1.0);
            }
            for (int u = 0; u < m; u++) {
                for (int at = t.outStart()[u]; at < t.outStart()[u + 1]; at++) {
                    target[u][t.trustees()[at]] = 1.0;
                    confidence[u][t.trustees()[at]] = 1.0 + (double) s.trustAlpha() * t.outWeights()[at];
                }
            }
            double trust = 0;
            for (int u = 0; u < m; u++) {
                for (int v = 0; v < m; v++) {
                    double dot = 0;
                    for (int a = 0; a < k; a++) {
                        dot += (double) p[u * k + a] * z[v * k + a];
                    }
                    trust += confidence[u][v] * (target[u][v] - dot) * (target[u][v] - dot);
                }
            }
            total += s.trustWeight() * trust;
        }
        if (s.coupling() == Coupling.NEIGHBOUR) {
            // β Σ_u ‖p_u − Σ_v (w_uv / Σ_v' w_uv') p_v‖² over users who trust someone, from a dense W
            double[][] w = new double[m][m];
            for (int u = 0; u < m; u++) {
                for (int at = t.outStart()[u]; at < t.outStart()[u + 1]; at++) {
                    w[u][t.trustees()[at]] = t.outWeights()[at];
                }
            }
            double term = 0;
            for (int u = 0; u < m; u++) {
                double rowSum = Arrays.stream(w[u]).sum();
                if (rowSum == 0) {
                    continue;
                }
                for (int a = 0; a < k; a++) {
                    double d = p[u * k + a];
                    for (int v = 0; v < m; v++) {
                        d -= w[u][v] / rowSum * p[v * k + a];
                    }
                    term += d * d;
                }
            }
            total += s.trustWeight() * term;
        }
        double reg = 0;
        for (int u = 0; u < m; u++) {
            double norm = (double) model.userBias()[u] * model.userBias()[u];
            for (int a = 0; a < k; a++) {
                norm += (double) p[u * k + a] * p[u * k + a];
            }
            reg += Math.max(r.userCount(u), 1) * norm;
            if (s.sharesFactors()) {
                double zn = 0;
                for (int a = 0; a < k; a++) {
                    zn += (double) z[u * k + a] * z[u * k + a];
                }
                reg += Math.max(t.inDegree(u), 1) * zn;
            }
        }
        for (int i = 0; i < n; i++) {
            double norm = (double) model.itemBias()[i] * model.itemBias()[i];
            for (int a = 0; a < k; a++) {
                norm += (double) q[i * k + a] * q[i * k + a];
            }
            reg += Math.max(r.itemCount(i), 1) * norm;
        }
        // γ (Σ_u b_u² + Σ_i b_i²): the bias prior, whatever the counts
        double biases = 0;
        for (float b : model.userBias()) {
            biases += (double) b * b;
        }
        for (float b : model.itemBias()) {
            biases += (double) b * b;
        }
        return total + s.lambda() * reg + s.biasPrior() * biases;
    }
}
