package dev.twofold.trainer.fit;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.parallel.Workers;

/**
 * The safeguard that keeps the user step of the neighbour coupling deterministic and monotone.
 *
 * <p>Under neighbour regularisation the users' rows are coupled, so an exact row-by-row
 * (Gauss–Seidel) sweep would depend on the order rows are visited, and so on the thread count. Twofold
 * instead proposes every row from the previous sweep's P (Jacobi style: each row's minimiser, or any
 * descent step on it, with every other row held at its old value), which is parallel and
 * order-free, and then moves the whole user block along the joint direction D = P' − P by the exact
 * minimiser of the objective on that line. With Q, b_i and μ fixed the user-block objective f is a
 * convex quadratic, so
 *
 * <pre>
 *   f(X + tD) = f(X) + t·∇f·D + t²·DᵀMD,   t* = −∇f·D / (2 DᵀMD)
 *   ∇f·D  = −2 Σ_(u,i) e_ui (D̃_u·q̃_i) + 2λ Σ_u ñ_u x̃_u·D̃_u + 2β Σ_{u∈U_T} d_u·δ_u
 *   DᵀMD  =    Σ_(u,i) (D̃_u·q̃_i)²     +  λ Σ_u ñ_u ‖D̃_u‖²   +  β Σ_{u∈U_T} ‖δ_u‖²
 * </pre>
 *
 * with e the current rating residuals, x̃_u = (p_u, b_u), D̃_u its direction, d_u the neighbour residual
 * and δ_u = D_u − Σ w̄_uv D_v. Since each proposed row decreases its own quadratic, D is a descent
 * direction, t* &gt; 0 and f(X + t*D) ≤ f(X): the objective never increases. Cost O(nnz·k + |E|·k).
 * Partial sums are kept per fixed block of rows and added in block order, so t* does not depend on
 * the thread count.
 */
final class UserBlockSearch {

    static final int ROWS_PER_BLOCK = 64;

    private UserBlockSearch() {
    }

    /**
     * Moves (p, bu) to (p, bu) + t*·(proposal − (p, bu)) and returns t* (0 when the proposal equals the
     * current point or the line has no curvature).
     *
     * @param proposal    proposed P' (m × k, double)
     * @param proposalBias proposed b_u' (ignored without biases)
     * @param d           neighbour residual of the current P (see {@link NeighbourTerm#residual})
     */
    static double move(Workers workers, RatingMatrix r, int k, boolean biases, float mu, float lambda, float biasPrior,
            float[] q, float[] bi, float[] p, float[] bu, double[] proposal, double[] proposalBias, NeighbourTerm term,
            double[] d) {
        int m = r.numUsers();
        int blocks = (m + ROWS_PER_BLOCK - 1) / ROWS_PER_BLOCK;
        double[] lin = new double[blocks];
        double[] quad = new double[blocks];
        double[] dir = new double[m * k];
        double[] dirBias = new double[m];
        for (int x = 0; x < m * k; x++) {
            dir[x] = proposal[x] - p[x];
        }
        if (biases) {
            for (int u = 0; u < m; u++) {
                dirBias[u] = proposalBias[u] - bu[u];
            }
        }
        int[] start = r.userStart();
        int[] items = r.userItems();
        float[] values = r.userValues();
        workers.forEachChunk(m, ROWS_PER_BLOCK, 2 * ROWS_PER_BLOCK, (w, from, to) -> {
            double[] scratch = new double[k];
            double[] pieces = new double[2];
            for (int b = from / ROWS_PER_BLOCK; b * ROWS_PER_BLOCK < to; b++) {
                int lo = b * ROWS_PER_BLOCK;
                int hi = Math.min(to, lo + ROWS_PER_BLOCK);
                double g = 0;
                double h = 0;
                for (int u = lo; u < hi; u++) {
                    int pu = u * k;
                    for (int at = start[u]; at < start[u + 1]; at++) {
                        int qi = items[at] * k;
                        double pred = biases ? (double) mu + bu[u] + bi[items[at]] : 0.0;
                        double along = biases ? dirBias[u] : 0.0;
                        for (int a = 0; a < k; a++) {
                            pred += (double) p[pu + a] * q[qi + a];
                            along += dir[pu + a] * q[qi + a];
                        }
                        double e = values[at] - pred;
                        g -= 2 * e * along;
                        h += along * along;
                    }
                    double ridge = (double) lambda * Math.max(start[u + 1] - start[u], 1);
                    double xd = biases ? bu[u] * dirBias[u] : 0.0;
                    double dd = biases ? dirBias[u] * dirBias[u] : 0.0;
                    for (int a = 0; a < k; a++) {
                        xd += p[pu + a] * dir[pu + a];
                        dd += dir[pu + a] * dir[pu + a];
                    }
                    g += 2 * ridge * xd;
                    h += ridge * dd;
                    if (biases) {
                        g += 2.0 * biasPrior * bu[u] * dirBias[u];
                        h += (double) biasPrior * dirBias[u] * dirBias[u];
                    }
                }
                term.directional(d, dir, k, lo, hi, scratch, pieces);
                g += 2.0 * term.beta() * pieces[0];
                h += term.beta() * pieces[1];
                lin[b] = g;
                quad[b] = h;
            }
        });
        double g = 0;
        double h = 0;
        for (int b = 0; b < blocks; b++) {
            g += lin[b];
            h += quad[b];
        }
        if (!(h > 0) || !(g < 0) || !Double.isFinite(g / h)) {
            return 0.0;
        }
        double t = -g / (2 * h);
        for (int x = 0; x < m * k; x++) {
            p[x] = (float) (p[x] + t * dir[x]);
        }
        if (biases) {
            for (int u = 0; u < m; u++) {
                bu[u] = (float) (bu[u] + t * dirBias[u]);
            }
        }
        return t;
    }
}
