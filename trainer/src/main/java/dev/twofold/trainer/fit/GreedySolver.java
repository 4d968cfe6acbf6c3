package dev.twofold.trainer.fit;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import dev.twofold.trainer.parallel.Workers;
import java.util.Arrays;

/**
 * Greedy coordinate descent with variable selection (C.-J. Hsieh, I. S. Dhillon, <i>Fast Coordinate
 * Descent Methods with Variable Selection for Non-negative Matrix Factorization</i>, KDD 2011), for
 * the objective of {@link Objective} under every coupling.
 *
 * <p>Blocks are visited as in {@link AlsSolver} (items, trustees, users). For each row the quadratic
 * f(x) = xᵀA x − 2 cᵀx of its block (the same A and c the ALS step would solve, shared coupling's
 * full trust row included through the Gram matrix) is not solved but descended one coordinate at a
 * time, always the coordinate whose exact update cuts f most:
 *
 * <pre>
 *   g = A x − c,   step_j = −g_j / A_jj,   cut_j = g_j² / A_jj,   j* = argmax_j cut_j
 * </pre>
 *
 * then x_j* += step_j* and g += step_j*·A[:, j*] in O(K). A row stops after {@value #MAX_STEPS_PER_DIM}·K
 * steps or when the best cut falls below {@value #STOP_FRACTION} of the row's first cut. Every step is
 * an exact minimisation along one coordinate, so f, and L, never increase; under neighbour coupling
 * the users' rows are descended against the previous sweep and the block then moves by the exact line
 * search of {@link UserBlockSearch}.
 *
 * <p>Cost per epoch O(nnz·k² + |E|·k² + (m + n)·steps·k): the assembly of ALS without its k³ solves.
 */
public final class GreedySolver implements Solver {

    static final int MAX_STEPS_PER_DIM = 2;
    static final double STOP_FRACTION = 1e-3;

    @Override
    public FittedModel fit(TrainingData data, FitSettings s, EpochListener listener) {
        FitState st = FitState.start(data, s);
        RatingMatrix r = data.ratings();
        TrustGraph t = data.trust();
        int m = st.m;
        int n = st.n;
        int k = st.k;
        int dim = st.biases ? k + 1 : k;
        int threads = s.threads();
        float[] p = st.p;
        float[] bu = st.bu;
        float[] q = st.q;
        float[] bi = st.bi;
        float[] z = st.z;
        NeighbourTerm nb = st.neighbour;
        double[] residual = nb == null ? null : new double[m * k];
        double[] proposal = nb == null ? null : new double[m * k];
        double[] proposalBias = nb == null ? null : new double[m];
        try (Workers workers = new Workers(threads)) {
            FoldIn.Scratch[] scratch = new FoldIn.Scratch[threads];
            double[][] x = new double[threads][dim];
            double[][] g = new double[threads][dim];
            double[][] pull = new double[threads][k];
            for (int w = 0; w < threads; w++) {
                scratch[w] = new FoldIn.Scratch(k);
            }
            int[] failed = new int[threads];
            int chunk = AlsSolver.ROWS_PER_CHUNK;
            int minParallel = AlsSolver.MIN_PARALLEL_ROWS;
            return FitLoop.run(data, s, st, workers, listener, epoch -> {
                Arrays.fill(failed, 0);
                FoldIn itemSide = new FoldIn(k, st.biases, st.mu, s.lambda(), p, bu, null, null, 0f, 0f)
                        .withBiasPrior(s.biasPrior());
                int[] itemStart = r.itemStart();
                workers.forEachChunk(n, chunk, minParallel, (w, from, to) -> {
                    for (int i = from; i < to; i++) {
                        if (itemStart[i] == itemStart[i + 1]) {
                            FitState.zeroRow(q, bi, i, k);
                            continue;
                        }
                        itemSide.assemble(r.itemUsers(), r.itemValues(), itemStart[i], itemStart[i + 1], null, null, 0, 0,
                                scratch[w]);
                        if (!descendRow(scratch[w], dim, q, st.biases ? bi : null, i, k, x[w], g[w])) {
                            failed[w]++;
                        }
                    }
                });
                if (z != null) {
                    TrusteeStep trusteeSide = new TrusteeStep(k, s.lambda(), s.trustWeight(), s.trustAlpha(), p,
                            NormalEquations.gram(p, m, k), t);
                    workers.forEachChunk(m, chunk, minParallel, (w, from, to) -> {
                        for (int v = from; v < to; v++) {
                            if (t.inDegree(v) == 0) {
                                FitState.zeroRow(z, null, v, k);
                                continue;
                            }
                            trusteeSide.assemble(v, scratch[w]);
                            if (!descendRow(scratch[w], k, z, null, v, k, x[w], g[w])) {
                                failed[w]++;
                            }
                        }
                    });
                }
                int[] userStart = r.userStart();
                int[] outStart = t.outStart();
                if (nb == null) {
                    FoldIn userSide = new FoldIn(k, st.biases, st.mu, s.lambda(), q, bi, z,
                            z != null ? NormalEquations.gram(z, m, k) : null, s.trustWeight(), s.trustAlpha())
                            .withBiasPrior(s.biasPrior());
                    workers.forEachChunk(m, chunk, minParallel, (w, from, to) -> {
                        for (int u = from; u < to; u++) {
                            if (!st.solvedUsers.get(u)) {
                                FitState.zeroRow(p, bu, u, k);
                                continue;
                            }
                            userSide.assemble(r.userItems(), r.userValues(), userStart[u], userStart[u + 1], t.trustees(),
                                    t.outWeights(), outStart[u], outStart[u + 1], scratch[w]);
                            if (!descendRow(scratch[w], dim, p, st.biases ? bu : null, u, k, x[w], g[w])) {
                                failed[w]++;
                            }
                        }
                    });
                } else {
                    FoldIn userSide = new FoldIn(k, st.biases, st.mu, s.lambda(), q, bi, null, null, 0f, 0f)
                            .withBiasPrior(s.biasPrior());
                    workers.forEachChunk(m, chunk, minParallel, (w, from, to) -> {
                        for (int u = from; u < to; u++) {
                            nb.residualRow(p, k, residual, u);
                        }
                    });
                    workers.forEachChunk(m, chunk, minParallel, (w, from, to) -> {
                        FoldIn.Scratch sc = scratch[w];
                        double[] xw = x[w];
                        for (int u = from; u < to; u++) {
                            int pu = u * k;
                            for (int a = 0; a < k; a++) {
                                xw[a] = p[pu + a];
                            }
                            if (st.biases) {
                                xw[k] = bu[u];
                            }
                            if (st.solvedUsers.get(u)) {
                                userSide.assemble(r.userItems(), r.userValues(), userStart[u], userStart[u + 1], null,
                                        null, 0, 0, sc);
                                nb.pull(u, p, k, residual, pull[w]);
                                NormalEquations.addNeighbour(sc.a, sc.c, k, dim, nb.beta(), nb.curvature(u), pull[w]);
                                if (!descend(sc.a, sc.c, dim, xw, g[w])) {
                                    failed[w]++;
                                    for (int a = 0; a < k; a++) {
                                        xw[a] = p[pu + a];
                                    }
                                    if (st.biases) {
                                        xw[k] = bu[u];
                                    }
                                }
                            }
                            for (int a = 0; a < k; a++) {
                                proposal[pu + a] = xw[a];
                            }
                            proposalBias[u] = st.biases ? xw[k] : 0.0;
                        }
                    });
                    UserBlockSearch.move(workers, r, k, st.biases, st.mu, s.lambda(), s.biasPrior(), q, bi,
                            p, bu, proposal, proposalBias, nb, residual);
                }
                int failures = 0;
                for (int f : failed) {
                    failures += f;
                }
                return failures;
            });
        }
    }

    /** Descends one stored row (factors, and bias when {@code bias} is given) on the assembled system. */
    private static boolean descendRow(FoldIn.Scratch sc, int dim, float[] f, float[] bias, int row, int k, double[] x,
            double[] g) {
        int off = row * k;
        for (int a = 0; a < k; a++) {
            x[a] = f[off + a];
        }
        if (dim > k) {
            x[k] = bias[row];
        }
        if (!descend(sc.a, sc.c, dim, x, g)) {
            return false;
        }
        for (int a = 0; a < k; a++) {
            f[off + a] = (float) x[a];
        }
        if (dim > k) {
            bias[row] = (float) x[k];
        }
        return true;
    }

    /**
     * Greedy coordinate descent on xᵀAx − 2cᵀx from x, in place. A holds its upper triangle (the lower
     * one is filled here). Returns false, leaving x unusable, when a value is not finite.
     */
    static boolean descend(double[] a, double[] c, int dim, double[] x, double[] g) {
        for (int i = 0; i < dim; i++) {
            for (int j = i + 1; j < dim; j++) {
                a[j * dim + i] = a[i * dim + j];
            }
        }
        for (int i = 0; i < dim; i++) {
            double s = -c[i];
            int row = i * dim;
            for (int j = 0; j < dim; j++) {
                s += a[row + j] * x[j];
            }
            g[i] = s;
        }
        double first = -1;
        int maxSteps = MAX_STEPS_PER_DIM * dim;
        for (int step = 0; step < maxSteps; step++) {
            int best = -1;
            double cut = 0;
            for (int j = 0; j < dim; j++) {
                double ajj = a[j * dim + j];
                if (ajj > 0) {
                    double cj = g[j] * g[j] / ajj;
                    if (cj > cut) {
                        cut = cj;
                        best = j;
                    }
                }
            }
            if (best < 0) {
                break;
            }
            if (first < 0) {
                first = cut;
            } else if (cut < STOP_FRACTION * first) {
                break;
            }
            double delta = -g[best] / a[best * dim + best];
            x[best] += delta;
            int row = best * dim;
            for (int i = 0; i < dim; i++) {
                g[i] += delta * a[row + i];
            }
        }
        for (int i = 0; i < dim; i++) {
            if (!Double.isFinite(x[i])) {
                return false;
            }
        }
        return true;
    }
}
