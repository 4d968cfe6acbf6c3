package dev.twofold.trainer.fit;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import dev.twofold.trainer.parallel.Workers;
import java.util.Arrays;

/**
 * Alternating least squares for the objective of {@link Objective}: biased matrix factorisation of
 * the ratings with weighted-λ regularisation (Zhou et al., AAIM 2008), optionally coupled with trust
 * through shared user factors, T ≈ P·Zᵀ (SoRec, Ma et al., CIKM 2008) with T weighted as a full
 * matrix (Hu, Koren, Volinsky, ICDM 2008), or through neighbour regularisation (SocialMF, Jamali and
 * Ester, RecSys 2010).
 *
 * <p>One epoch runs three half-steps:
 * <ol>
 *   <li>items: (q_i, b_i) for every item against P, b_u ({@link FoldIn} with the roles swapped);
 *   <li>trustees (shared coupling): z_v for every user against P, using PᵀP once ({@link TrusteeStep});
 *   <li>users: (p_u, b_u) for every user against Q, b_i and Z, using ZᵀZ once ({@link FoldIn}); under
 *       neighbour coupling each row's system also holds β c_u I and β pull_u ({@link NeighbourTerm}),
 *       every row is solved against the previous sweep's P, and the block then moves by the exact line
 *       search of {@link UserBlockSearch}.
 * </ol>
 * Each half-step is the exact minimiser of L over its block with the others fixed (the neighbour user
 * step the minimiser along a descent line), so L never increases. Without neighbour coupling users
 * come last, so the published P is exactly what {@link FoldIn} gives each user against the published
 * Q and Z. Rows with no observations are set to zero (their exact solution for λ &gt; 0). A row whose
 * system cannot be solved keeps its previous value and is counted in {@link EpochReport#failedSolves()}.
 *
 * <p>Cost per epoch O(nnz·k² + |E|·k² + (m + n)·k³), with m users, n items, nnz ratings and |E|
 * trust edges; T is never materialised. Rows of a half-step are solved in parallel (above a size
 * threshold); each depends only on the previous half-step and sums in a fixed order, so the factors
 * are bitwise the same for a seed whatever the thread count.
 */
public final class AlsSolver implements Solver {

    static final int ROWS_PER_CHUNK = 64;
    static final int MIN_PARALLEL_ROWS = 512;

    @Override
    public FittedModel fit(TrainingData data, FitSettings s, EpochListener listener) {
        FitState st = FitState.start(data, s);
        RatingMatrix r = data.ratings();
        TrustGraph t = data.trust();
        int m = st.m;
        int n = st.n;
        int k = st.k;
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
            double[][] pull = new double[threads][k];
            for (int w = 0; w < threads; w++) {
                scratch[w] = new FoldIn.Scratch(k);
            }
            int[] failed = new int[threads];
            return FitLoop.run(data, s, st, workers, listener, epoch -> {
                Arrays.fill(failed, 0);

                FoldIn itemSide = new FoldIn(k, st.biases, st.mu, s.lambda(), p, bu, null, null, 0f, 0f)
                        .withBiasPrior(s.biasPrior());
                int[] itemStart = r.itemStart();
                workers.forEachChunk(n, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                    for (int i = from; i < to; i++) {
                        if (itemStart[i] == itemStart[i + 1]) {
                            FitState.zeroRow(q, bi, i, k);
                        } else if (itemSide.solve(r.itemUsers(), r.itemValues(), itemStart[i], itemStart[i + 1], scratch[w])) {
                            store(scratch[w], q, bi, i, k);
                        } else {
                            failed[w]++;
                        }
                    }
                });

                if (z != null) {
                    TrusteeStep trusteeSide = new TrusteeStep(k, s.lambda(), s.trustWeight(), s.trustAlpha(), p,
                            NormalEquations.gram(p, m, k), t);
                    workers.forEachChunk(m, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                        for (int v = from; v < to; v++) {
                            if (t.inDegree(v) == 0) {
                                FitState.zeroRow(z, null, v, k);
                            } else if (trusteeSide.solve(v, scratch[w])) {
                                store(scratch[w], z, null, v, k);
                            } else {
                                failed[w]++;
                            }
                        }
                    });
                }

                int[] userStart = r.userStart();
                if (nb == null) {
                    FoldIn userSide = new FoldIn(k, st.biases, st.mu, s.lambda(), q, bi, z,
                            z != null ? NormalEquations.gram(z, m, k) : null, s.trustWeight(), s.trustAlpha())
                            .withBiasPrior(s.biasPrior());
                    int[] outStart = t.outStart();
                    workers.forEachChunk(m, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                        for (int u = from; u < to; u++) {
                            if (!st.solvedUsers.get(u)) {
                                FitState.zeroRow(p, bu, u, k);
                            } else if (userSide.solve(r.userItems(), r.userValues(), userStart[u], userStart[u + 1],
                                    t.trustees(), t.outWeights(), outStart[u], outStart[u + 1], scratch[w])) {
                                store(scratch[w], p, bu, u, k);
                            } else {
                                failed[w]++;
                            }
                        }
                    });
                } else {
                    FoldIn userSide = new FoldIn(k, st.biases, st.mu, s.lambda(), q, bi, null, null, 0f, 0f)
                            .withBiasPrior(s.biasPrior());
                    workers.forEachChunk(m, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS,
                            (w, from, to) -> {
                                for (int u = from; u < to; u++) {
                                    nb.residualRow(p, k, residual, u);
                                }
                            });
                    int dim = st.biases ? k + 1 : k;
                    workers.forEachChunk(m, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                        FoldIn.Scratch sc = scratch[w];
                        for (int u = from; u < to; u++) {
                            int pu = u * k;
                            if (!st.solvedUsers.get(u)) {
                                Arrays.fill(proposal, pu, pu + k, 0.0);
                                proposalBias[u] = 0;
                                continue;
                            }
                            userSide.assemble(r.userItems(), r.userValues(), userStart[u], userStart[u + 1], null, null,
                                    0, 0, sc);
                            nb.pull(u, p, k, residual, pull[w]);
                            NormalEquations.addNeighbour(sc.a, sc.c, k, dim, nb.beta(), nb.curvature(u), pull[w]);
                            if (Cholesky.factor(sc.a, dim) && Cholesky.solve(sc.a, dim, sc.c)) {
                                for (int a = 0; a < k; a++) {
                                    proposal[pu + a] = sc.c[a];
                                }
                                proposalBias[u] = st.biases ? sc.c[k] : 0.0;
                            } else {
                                for (int a = 0; a < k; a++) {
                                    proposal[pu + a] = p[pu + a];
                                }
                                proposalBias[u] = bu[u];
                                failed[w]++;
                            }
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

    private static void store(FoldIn.Scratch scratch, float[] f, float[] bias, int row, int k) {
        scratch.copyFactors(f, row * k);
        if (bias != null) {
            bias[row] = (float) scratch.bias();
        }
    }
}
