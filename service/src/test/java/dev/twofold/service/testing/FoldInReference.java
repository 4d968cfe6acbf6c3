package dev.twofold.service.testing;

import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.registry.ModelHeader;
import dev.twofold.service.model.ServingModel;
import java.util.ArrayList;
import java.util.List;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.factory.LinearSolverFactory_DDRM;
import org.ejml.interfaces.linsol.LinearSolverDense;

/**
 * The fold-in objective for one user with everything else fixed, solved as an ordinary weighted
 * least-squares problem by EJML's QR solver (not the normal equations and Cholesky solve the
 * service uses): unknowns x = (p_u, b_u), minimising the training objective's terms for the user
 * (PRODUCT.md, "The maths"; docs/maths.md):
 * <pre>
 *   Σ_i (r_ui − μ − b_i − q_i·p − b)²                      over the user's ratings
 *   + λ n_u (‖p‖² + b²)
 *   shared coupling:     + τ Σ_v c_uv (t_uv − z_v·p)²      over every user v (t = 1, c = 1 + α w on an edge; t = 0, c = 1 off)
 *   neighbour coupling:  + β ‖p − Σ_v w̄_uv p_v‖²           over the trusted users with factors, w̄ = w / Σ w
 * </pre>
 */
public final class FoldInReference {

    private FoldInReference() {
    }

    /**
     * @param ratings (item id, rating) pairs of the user
     * @param trust   (trustee id, weight) pairs of the user
     * @return p_u (k values) followed by b_u
     */
    public static double[] leastSquares(ServingModel model, List<Object[]> ratings, List<Object[]> trust) {
        ModelHeader h = model.header();
        int k = model.rank();
        List<double[]> rows = new ArrayList<>();
        List<Double> targets = new ArrayList<>();
        float[] q = model.itemFactors();
        int rated = 0;
        for (Object[] r : ratings) {
            int item = model.itemIndex((String) r[0]);
            if (item < 0) {
                continue;
            }
            double[] row = new double[k + 1];
            for (int x = 0; x < k; x++) {
                row[x] = q[item * k + x];
            }
            row[k] = 1;
            rows.add(row);
            targets.add(((Number) r[1]).doubleValue() - h.globalMean() - model.itemBias()[item]);
            rated++;
        }
        double[] edgeWeight = new double[model.trainedUsers()];
        for (Object[] e : trust) {
            int v = model.userIndex((String) e[0]);
            if (v >= 0 && v < edgeWeight.length) {
                edgeWeight[v] = ((Number) e[1]).doubleValue();
            }
        }
        if ("shared".equals(h.coupling())) {
            float[] z = model.trustFactors();
            for (int v = 0; v < model.trainedUsers(); v++) {
                boolean edge = edgeWeight[v] > 0;
                double weight = Math.sqrt(h.trustWeight() * (edge ? 1 + h.trustAlpha() * edgeWeight[v] : 1));
                double[] row = new double[k + 1];
                for (int x = 0; x < k; x++) {
                    row[x] = weight * z[v * k + x];
                }
                rows.add(row);
                targets.add(edge ? weight : 0.0);
            }
        } else if ("neighbour".equals(h.coupling())) {
            double total = 0;
            double[] average = new double[k];
            for (int v = 0; v < model.trainedUsers(); v++) {
                if (edgeWeight[v] > 0 && model.hasFactors(v)) {
                    total += edgeWeight[v];
                    for (int x = 0; x < k; x++) {
                        average[x] += edgeWeight[v] * model.userFactors()[v * k + x];
                    }
                }
            }
            if (total > 0) {
                double weight = Math.sqrt(h.trustWeight());
                for (int x = 0; x < k; x++) {
                    double[] row = new double[k + 1];
                    row[x] = weight;
                    rows.add(row);
                    targets.add(weight * average[x] / total);
                }
            }
        }
        double ridge = Math.sqrt(h.lambda() * Math.max(1, rated));
        for (int x = 0; x <= k; x++) {
            double[] row = new double[k + 1];
            row[x] = ridge;
            rows.add(row);
            targets.add(0.0);
        }
        // the bias prior γ (a training parameter) adds γ·b_u²: one more row √γ on the bias coordinate
        double prior = dev.twofold.service.model.FoldSettings.of(h).biasPrior();
        if (prior > 0) {
            double[] row = new double[k + 1];
            row[k] = Math.sqrt(prior);
            rows.add(row);
            targets.add(0.0);
        }
        DMatrixRMaj a = new DMatrixRMaj(rows.size(), k + 1);
        DMatrixRMaj b = new DMatrixRMaj(rows.size(), 1);
        for (int r = 0; r < rows.size(); r++) {
            for (int x = 0; x <= k; x++) {
                a.set(r, x, rows.get(r)[x]);
            }
            b.set(r, 0, targets.get(r));
        }
        LinearSolverDense<DMatrixRMaj> solver = LinearSolverFactory_DDRM.leastSquares(rows.size(), k + 1);
        assertTrue(solver.setA(a), "the least-squares system has full column rank");
        DMatrixRMaj solution = new DMatrixRMaj(k + 1, 1);
        solver.solve(b, solution);
        return solution.getData().clone();
    }
}
