package dev.twofold.trainer.fit;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import dev.twofold.trainer.parallel.Workers;

/**
 * Cyclic coordinate descent with a maintained residual, CCD++ (H.-F. Yu, C.-J. Hsieh, S. Si,
 * I. Dhillon, <i>Scalable Coordinate Descent Approaches to Parallel Matrix Factorization for
 * Recommender Systems</i>, ICDM 2012), for the objective of {@link Objective} under every coupling.
 *
 * <p>One epoch updates the model one rank-one piece at a time: first the bias "columns" (b_i against
 * a fixed 1, then b_u), then for each factor t = 1..k the columns Q[:,t], Z[:,t] (shared coupling)
 * and P[:,t], {@value #INNER_ITERATIONS} times alternately, against the residual with that piece
 * added back, ê_ui = e_ui + p_ut q_it. Every scalar update is the exact minimiser of L over its
 * coordinate, e.g. for the ratings-only case
 *
 * <pre>
 *   p_ut = Σ_i ê_ui q_it / (Σ_i q_it² + λ ñ_u)
 * </pre>
 *
 * and the residuals e (kept in both rating orientations) are corrected once per piece,
 * e ← e + p_t^old q_t^oldᵀ − p_t q_tᵀ on the observed cells. For shared coupling the full weighted
 * trust row of u enters through the Gram matrix G = ZᵀZ without materialising T: with ŝ_uv = p_u·z_v −
 * p_ut z_vt on each edge (maintained like e),
 *
 * <pre>
 *   p_ut = [Σ_i ê_ui q_it + τ (Σ_{v∈N(u)} (c_uv − α w_uv ŝ_uv) z_vt − Σ_{a≠t} G_ta p_ua)]
 *        / [Σ_i q_it² + τ (G_tt + Σ_{v∈N(u)} α w_uv z_vt²) + λ ñ_u]
 * </pre>
 *
 * with row t of G refreshed after each Z column, O(m·k). For neighbour coupling the users of a
 * column are coupled; each coordinate is proposed from the previous values (Jacobi style) and the
 * column then moves by the exact line search on its quadratic, as {@link UserBlockSearch} does for
 * whole rows, so the result does not depend on threads and L never increases.
 *
 * <p>Cost per epoch O(k·(2·inner + 2)·(nnz + |E|) + k·m·k): linear in nnz per factor, no k×k solves.
 * Rows of a column are updated in parallel; the factors are bitwise the same whatever the thread count.
 */
public final class CcdSolver implements Solver {

    /** Alternations between the item, trustee and user columns of one rank-one piece. */
    static final int INNER_ITERATIONS = 2;
    private static final int ROWS_PER_CHUNK = 256;
    private static final int MIN_PARALLEL_ROWS = 1024;

    @Override
    public FittedModel fit(TrainingData data, FitSettings s, EpochListener listener) {
        FitState st = FitState.start(data, s);
        try (Workers workers = new Workers(s.threads())) {
            Run run = new Run(data, s, st, workers);
            return FitLoop.run(data, s, st, workers, listener, epoch -> run.epoch());
        }
    }

    /** The state of one fit: residuals and Gram matrices kept between columns. */
    private static final class Run {
        private final RatingMatrix r;
        private final TrustGraph t;
        private final FitSettings s;
        private final FitState st;
        private final Workers workers;
        private final int m;
        private final int n;
        private final int k;
        private final double lambda;
        private final double biasPrior;
        private final double tau;
        private final double alpha;
        /** Residuals r − r̂ in CSR order and in CSC order. */
        private final double[] eUser;
        private final double[] eItem;
        /** p_u·z_v on each out-edge (CSR by truster) and each in-edge (by trustee); shared coupling only. */
        private final double[] sOut;
        private final double[] sIn;
        private final double[] gramP;
        private final double[] gramZ;
        private final double[] oldP;
        private final double[] oldQ;
        private final double[] oldZ;
        private final double[] oldBias;
        /** Neighbour coupling: per-user curvature and linear part of a column, the column's residual, proposals. */
        private final double[] h;
        private final double[] b;
        private final double[] dcol;
        private final double[] direction;

        Run(TrainingData data, FitSettings s, FitState st, Workers workers) {
            this.r = data.ratings();
            this.t = data.trust();
            this.s = s;
            this.st = st;
            this.workers = workers;
            this.m = st.m;
            this.n = st.n;
            this.k = st.k;
            this.lambda = s.lambda();
            this.biasPrior = s.biasPrior();
            this.tau = s.trustWeight();
            this.alpha = s.trustAlpha();
            eUser = new double[r.nnz()];
            eItem = new double[r.nnz()];
            boolean shared = st.z != null;
            sOut = shared ? new double[t.numEdges()] : null;
            sIn = shared ? new double[t.numEdges()] : null;
            gramP = shared ? new double[k * k] : null;
            gramZ = shared ? new double[k * k] : null;
            oldP = new double[m];
            oldQ = new double[n];
            oldZ = shared ? new double[m] : null;
            oldBias = new double[Math.max(m, n)];
            boolean nb = st.neighbour != null;
            h = nb ? new double[m] : null;
            b = nb ? new double[m] : null;
            dcol = nb ? new double[m] : null;
            direction = nb ? new double[m] : null;
        }

        int epoch() {
            residuals();
            if (st.biases) {
                itemBiases();
                userBiases();
            }
            for (int c = 0; c < k; c++) {
                column(c);
            }
            return 0;
        }

        /** Recomputes e (and the edge products) from the parameters, so rounding never accumulates. */
        private void residuals() {
            float[] p = st.p;
            float[] q = st.q;
            int[] us = r.userStart();
            int[] ui = r.userItems();
            float[] uv = r.userValues();
            workers.forEachChunk(m, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                for (int u = from; u < to; u++) {
                    for (int at = us[u]; at < us[u + 1]; at++) {
                        eUser[at] = uv[at] - predict(p, q, u, ui[at]);
                    }
                }
            });
            int[] is = r.itemStart();
            int[] iu = r.itemUsers();
            float[] iv = r.itemValues();
            workers.forEachChunk(n, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                for (int i = from; i < to; i++) {
                    for (int at = is[i]; at < is[i + 1]; at++) {
                        eItem[at] = iv[at] - predict(p, q, iu[at], i);
                    }
                }
            });
            if (st.z != null) {
                float[] z = st.z;
                int[] os = t.outStart();
                int[] tv = t.trustees();
                int[] ins = t.inStart();
                int[] tu = t.trusters();
                for (int u = 0; u < m; u++) {
                    for (int at = os[u]; at < os[u + 1]; at++) {
                        sOut[at] = dot(p, u, z, tv[at]);
                    }
                }
                for (int v = 0; v < m; v++) {
                    for (int at = ins[v]; at < ins[v + 1]; at++) {
                        sIn[at] = dot(p, tu[at], z, v);
                    }
                }
                System.arraycopy(NormalEquations.gram(p, m, k), 0, gramP, 0, k * k);
                System.arraycopy(NormalEquations.gram(z, m, k), 0, gramZ, 0, k * k);
            }
        }

        private double predict(float[] p, float[] q, int u, int i) {
            double pred = st.biases ? (double) st.mu + st.bu[u] + st.bi[i] : 0.0;
            int pu = u * k;
            int qi = i * k;
            for (int a = 0; a < k; a++) {
                pred += (double) p[pu + a] * q[qi + a];
            }
            return pred;
        }

        private double dot(float[] x, int row, float[] y, int other) {
            double d = 0;
            for (int a = 0; a < k; a++) {
                d += (double) x[row * k + a] * y[other * k + a];
            }
            return d;
        }

        /** b_i = Σ_u (e_ui + b_i) / (n_i + λ ñ_i + γ): exact over b_i. */
        private void itemBiases() {
            refitBiases(st.bi, n, r.itemStart(), eItem);
            correctResiduals(null, st.bi, true);
        }

        /** b_u = Σ_i (e_ui + b_u) / (n_u + λ ñ_u + γ): exact over b_u (no trust term touches biases). */
        private void userBiases() {
            refitBiases(st.bu, m, r.userStart(), eUser);
            correctResiduals(st.bu, null, false);
        }

        /** One side's biases from its residuals in that side's orientation, keeping the old ones. */
        private void refitBiases(float[] bias, int rows, int[] start, double[] residual) {
            workers.forEachChunk(rows, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                for (int row = from; row < to; row++) {
                    oldBias[row] = bias[row];
                    int count = start[row + 1] - start[row];
                    if (count == 0) {
                        continue;
                    }
                    double sum = 0;
                    for (int at = start[row]; at < start[row + 1]; at++) {
                        sum += residual[at] + bias[row];
                    }
                    bias[row] = (float) (sum / (count + lambda * count + biasPrior));
                }
            });
        }

        /** After a bias column changed: e += old − new in both orientations. */
        private void correctResiduals(float[] bu, float[] bi, boolean items) {
            int[] us = r.userStart();
            int[] ui = r.userItems();
            int[] is = r.itemStart();
            int[] iu = r.itemUsers();
            workers.forEachChunk(m, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                for (int u = from; u < to; u++) {
                    for (int at = us[u]; at < us[u + 1]; at++) {
                        eUser[at] += items ? oldBias[ui[at]] - bi[ui[at]] : oldBias[u] - bu[u];
                    }
                }
            });
            workers.forEachChunk(n, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                for (int i = from; i < to; i++) {
                    for (int at = is[i]; at < is[i + 1]; at++) {
                        eItem[at] += items ? oldBias[i] - bi[i] : oldBias[iu[at]] - bu[iu[at]];
                    }
                }
            });
        }

        /** The rank-one piece t: save its old columns, alternate the updates, correct the residuals. */
        private void column(int c) {
            float[] p = st.p;
            float[] q = st.q;
            float[] z = st.z;
            for (int u = 0; u < m; u++) {
                oldP[u] = p[u * k + c];
            }
            for (int i = 0; i < n; i++) {
                oldQ[i] = q[i * k + c];
            }
            if (z != null) {
                for (int v = 0; v < m; v++) {
                    oldZ[v] = z[v * k + c];
                }
            }
            for (int inner = 0; inner < INNER_ITERATIONS; inner++) {
                itemColumn(c);
                if (z != null) {
                    trusteeColumn(c);
                    refreshGramRow(gramZ, z, c);
                }
                if (st.neighbour != null) {
                    userColumnWithNeighbours(c);
                } else {
                    userColumn(c);
                }
                if (z != null) {
                    refreshGramRow(gramP, p, c);
                }
            }
            int[] us = r.userStart();
            int[] ui = r.userItems();
            int[] is = r.itemStart();
            int[] iu = r.itemUsers();
            workers.forEachChunk(m, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                for (int u = from; u < to; u++) {
                    double pu = p[u * k + c];
                    for (int at = us[u]; at < us[u + 1]; at++) {
                        int i = ui[at];
                        eUser[at] += oldP[u] * oldQ[i] - pu * q[i * k + c];
                    }
                }
            });
            workers.forEachChunk(n, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                for (int i = from; i < to; i++) {
                    double qi = q[i * k + c];
                    for (int at = is[i]; at < is[i + 1]; at++) {
                        int u = iu[at];
                        eItem[at] += oldP[u] * oldQ[i] - p[u * k + c] * qi;
                    }
                }
            });
            if (z != null) {
                int[] os = t.outStart();
                int[] tv = t.trustees();
                int[] ins = t.inStart();
                int[] tu = t.trusters();
                for (int u = 0; u < m; u++) {
                    for (int at = os[u]; at < os[u + 1]; at++) {
                        int v = tv[at];
                        sOut[at] += p[u * k + c] * (double) z[v * k + c] - oldP[u] * oldZ[v];
                    }
                }
                for (int v = 0; v < m; v++) {
                    for (int at = ins[v]; at < ins[v + 1]; at++) {
                        int u = tu[at];
                        sIn[at] += p[u * k + c] * (double) z[v * k + c] - oldP[u] * oldZ[v];
                    }
                }
            }
        }

        /** q_it = Σ_u ê_ui p_ut / (Σ_u p_ut² + λ ñ_i) for every item with ratings. */
        private void itemColumn(int c) {
            float[] p = st.p;
            float[] q = st.q;
            int[] is = r.itemStart();
            int[] iu = r.itemUsers();
            workers.forEachChunk(n, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                for (int i = from; i < to; i++) {
                    int count = is[i + 1] - is[i];
                    if (count == 0) {
                        continue;
                    }
                    double num = 0;
                    double den = lambda * count;
                    for (int at = is[i]; at < is[i + 1]; at++) {
                        int u = iu[at];
                        double pu = p[u * k + c];
                        num += (eItem[at] + oldP[u] * oldQ[i]) * pu;
                        den += pu * pu;
                    }
                    if (den > 0) {
                        q[i * k + c] = (float) (num / den);
                    }
                }
            });
        }

        /** z_vt exact over its coordinate, the column v of T through PᵀP corrected on the observed edges. */
        private void trusteeColumn(int c) {
            float[] p = st.p;
            float[] z = st.z;
            int[] ins = t.inStart();
            int[] tu = t.trusters();
            float[] iw = t.inWeights();
            workers.forEachChunk(m, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                for (int v = from; v < to; v++) {
                    int count = ins[v + 1] - ins[v];
                    if (count == 0) {
                        continue;
                    }
                    double num = 0;
                    double den = gramP[c * k + c];
                    for (int at = ins[v]; at < ins[v + 1]; at++) {
                        int u = tu[at];
                        double pu = p[u * k + c];
                        double aw = alpha * iw[at];
                        double rest = sIn[at] - oldP[u] * oldZ[v];
                        num += (1 + aw - aw * rest) * pu;
                        den += aw * pu * pu;
                    }
                    for (int a = 0; a < k; a++) {
                        if (a != c) {
                            num -= gramP[c * k + a] * z[v * k + a];
                        }
                    }
                    num *= tau;
                    den = tau * den + lambda * count;
                    if (den > 0) {
                        z[v * k + c] = (float) (num / den);
                    }
                }
            });
        }

        /** p_ut exact over its coordinate for every solved user (ratings, and the shared trust row). */
        private void userColumn(int c) {
            float[] p = st.p;
            float[] q = st.q;
            float[] z = st.z;
            int[] us = r.userStart();
            int[] ui = r.userItems();
            int[] os = t.outStart();
            int[] tv = t.trustees();
            float[] ow = t.outWeights();
            workers.forEachChunk(m, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                for (int u = from; u < to; u++) {
                    if (!st.solvedUsers.get(u)) {
                        continue;
                    }
                    int count = us[u + 1] - us[u];
                    double num = 0;
                    double den = lambda * Math.max(count, 1);
                    for (int at = us[u]; at < us[u + 1]; at++) {
                        int i = ui[at];
                        double qi = q[i * k + c];
                        num += (eUser[at] + oldP[u] * oldQ[i]) * qi;
                        den += qi * qi;
                    }
                    if (z != null && tau > 0) {
                        double tn = 0;
                        double td = gramZ[c * k + c];
                        for (int at = os[u]; at < os[u + 1]; at++) {
                            int v = tv[at];
                            double zv = z[v * k + c];
                            double aw = alpha * ow[at];
                            double rest = sOut[at] - oldP[u] * oldZ[v];
                            tn += (1 + aw - aw * rest) * zv;
                            td += aw * zv * zv;
                        }
                        for (int a = 0; a < k; a++) {
                            if (a != c) {
                                tn -= gramZ[c * k + a] * p[u * k + a];
                            }
                        }
                        num += tau * tn;
                        den += tau * td;
                    }
                    if (den > 0) {
                        p[u * k + c] = (float) (num / den);
                    }
                }
            });
        }

        /**
         * Column c of P under neighbour coupling: every coordinate proposed against the old column
         * (ratings part h_u x² − 2 b_u x plus the neighbour term), then the exact line search on the
         * column's quadratic along the joint direction.
         */
        private void userColumnWithNeighbours(int c) {
            float[] p = st.p;
            float[] q = st.q;
            NeighbourTerm nb = st.neighbour;
            double beta = nb.beta();
            int[] us = r.userStart();
            int[] ui = r.userItems();
            int[] os = nb.outStart();
            int[] tv = nb.trustees();
            double[] share = nb.outShare();
            int[] ins = nb.inStart();
            int[] tu = nb.trusters();
            double[] inShare = nb.inShare();
            workers.forEachChunk(m, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                for (int u = from; u < to; u++) {
                    double d = 0;
                    if (os[u] < os[u + 1]) {
                        d = p[u * k + c];
                        for (int at = os[u]; at < os[u + 1]; at++) {
                            d -= share[at] * p[tv[at] * k + c];
                        }
                    }
                    dcol[u] = d;
                }
            });
            int blocks = (m + UserBlockSearch.ROWS_PER_BLOCK - 1) / UserBlockSearch.ROWS_PER_BLOCK;
            double[] lin = new double[blocks];
            double[] quad = new double[blocks];
            workers.forEachChunk(m, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                for (int u = from; u < to; u++) {
                    if (!st.solvedUsers.get(u)) {
                        h[u] = 0;
                        b[u] = 0;
                        direction[u] = 0;
                        continue;
                    }
                    int count = us[u + 1] - us[u];
                    double num = 0;
                    double den = lambda * Math.max(count, 1);
                    for (int at = us[u]; at < us[u + 1]; at++) {
                        int i = ui[at];
                        double qi = q[i * k + c];
                        num += (eUser[at] + oldP[u] * oldQ[i]) * qi;
                        den += qi * qi;
                    }
                    h[u] = den;
                    b[u] = num;
                    double x = p[u * k + c];
                    double pull = os[u] < os[u + 1] ? x - dcol[u] : 0.0;
                    for (int at = ins[u]; at < ins[u + 1]; at++) {
                        pull += inShare[at] * (dcol[tu[at]] + inShare[at] * x);
                    }
                    double total = den + beta * nb.curvature(u);
                    direction[u] = total > 0 ? (num + beta * pull) / total - x : 0.0;
                }
            });
            workers.forEachChunk(m, UserBlockSearch.ROWS_PER_BLOCK, 2 * UserBlockSearch.ROWS_PER_BLOCK, (w, from, to) -> {
                for (int blk = from / UserBlockSearch.ROWS_PER_BLOCK; blk * UserBlockSearch.ROWS_PER_BLOCK < to; blk++) {
                    int lo = blk * UserBlockSearch.ROWS_PER_BLOCK;
                    int hi = Math.min(to, lo + UserBlockSearch.ROWS_PER_BLOCK);
                    double g = 0;
                    double hh = 0;
                    for (int u = lo; u < hi; u++) {
                        double du = direction[u];
                        g += 2 * (h[u] * p[u * k + c] - b[u]) * du;
                        hh += h[u] * du * du;
                        if (os[u] < os[u + 1]) {
                            double delta = du;
                            for (int at = os[u]; at < os[u + 1]; at++) {
                                delta -= share[at] * direction[tv[at]];
                            }
                            g += 2 * beta * dcol[u] * delta;
                            hh += beta * delta * delta;
                        }
                    }
                    lin[blk] = g;
                    quad[blk] = hh;
                }
            });
            double g = 0;
            double hh = 0;
            for (int blk = 0; blk < blocks; blk++) {
                g += lin[blk];
                hh += quad[blk];
            }
            if (!(hh > 0) || !(g < 0) || !Double.isFinite(g / hh)) {
                return;
            }
            double step = -g / (2 * hh);
            for (int u = 0; u < m; u++) {
                p[u * k + c] = (float) (p[u * k + c] + step * direction[u]);
            }
        }

        /** Row (and column) c of a Gram matrix FᵀF after column c of F changed. O(m·k). */
        private void refreshGramRow(double[] gram, float[] f, int c) {
            for (int a = 0; a < k; a++) {
                double sum = 0;
                for (int row = 0; row < m; row++) {
                    sum += (double) f[row * k + c] * f[row * k + a];
                }
                gram[c * k + a] = sum;
                gram[a * k + c] = sum;
            }
        }
    }
}
