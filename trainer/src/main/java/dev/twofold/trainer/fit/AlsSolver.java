package dev.twofold.trainer.fit;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import dev.twofold.trainer.parallel.Workers;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.BitSet;
import java.util.List;
import java.util.SplittableRandom;

/**
 * Alternating least squares for the objective of {@link Objective}: biased matrix factorisation of
 * the ratings with weighted-λ regularisation (Zhou et al., AAIM 2008), optionally coupled with trust
 * through shared user factors, T ≈ P·Zᵀ (SoRec, Ma et al., CIKM 2008) with T weighted as a full
 * matrix (Hu, Koren, Volinsky, ICDM 2008).
 *
 * <p>One epoch runs three half-steps, each the exact minimiser of L over one block with the others
 * fixed, so L never increases:
 * <ol>
 *   <li>items: (q_i, b_i) for every item against P, b_u ({@link FoldIn} with the roles swapped);
 *   <li>trustees (shared coupling): z_v for every user against P, using PᵀP once ({@link TrusteeStep});
 *   <li>users: (p_u, b_u) for every user against Q, b_i and Z, using ZᵀZ once ({@link FoldIn}).
 * </ol>
 * Users come last, so the published P is exactly what {@link FoldIn} gives each user against the
 * published Q and Z. Rows with no observations are set to zero (their exact solution for λ &gt; 0).
 * A row whose system cannot be solved keeps its previous value and is counted in
 * {@link EpochReport#failedSolves()}.
 *
 * <p>Cost per epoch O(nnz·k² + |E|·k² + (m + n)·k³), with m users, n items, nnz ratings and |E|
 * trust edges; T is never materialised. Rows of a half-step are solved in parallel (above a size
 * threshold); each depends only on the previous half-step and sums in a fixed order, so the factors
 * are bitwise the same for a seed whatever the thread count.
 *
 * <p>μ is the mean training rating (0 without biases). Initial factors are Gaussian with standard
 * deviation initScale/√k from the seed; rows without data start at zero.
 */
public final class AlsSolver implements Solver {

    static final int ROWS_PER_CHUNK = 64;
    static final int MIN_PARALLEL_ROWS = 512;

    @Override
    public FittedModel fit(TrainingData data, FitSettings s, EpochListener listener) {
        RatingMatrix r = data.ratings();
        TrustGraph t = data.trust();
        if (r.nnz() == 0) {
            throw new IllegalArgumentException("no training ratings: there is nothing to fit");
        }
        int m = r.numUsers();
        int n = r.numItems();
        int k = s.rank();
        boolean biases = s.biases();
        boolean shared = s.sharesFactors();
        float mu = biases ? (float) r.mean() : 0f;
        int threads = s.threads();

        BitSet knownUsers = new BitSet(m);
        BitSet knownItems = new BitSet(n);
        BitSet knownTrustees = new BitSet(m);
        for (int u = 0; u < m; u++) {
            if (r.userCount(u) > 0 || (shared && t.outDegree(u) > 0)) {
                knownUsers.set(u);
            }
            if (shared && t.inDegree(u) > 0) {
                knownTrustees.set(u);
            }
        }
        for (int i = 0; i < n; i++) {
            if (r.itemCount(i) > 0) {
                knownItems.set(i);
            }
        }

        float[] p = new float[m * k];
        float[] bu = new float[m];
        float[] q = new float[n * k];
        float[] bi = new float[n];
        float[] z = shared ? new float[m * k] : null;
        SplittableRandom random = new SplittableRandom(s.seed());
        double sd = s.initScale() / Math.sqrt(Math.max(k, 1));
        initialise(p, m, k, knownUsers, random, sd);
        initialise(q, n, k, knownItems, random, sd);
        if (shared) {
            initialise(z, m, k, knownTrustees, random, sd);
        }

        List<EpochReport> history = new ArrayList<>();
        Best best = s.patience() > 0 && !data.validation().isEmpty() ? new Best() : null;
        try (Workers workers = new Workers(threads)) {
            FoldIn.Scratch[] scratch = new FoldIn.Scratch[threads];
            for (int w = 0; w < threads; w++) {
                scratch[w] = new FoldIn.Scratch(k);
            }
            int[] failed = new int[threads];
            for (int epoch = 1; epoch <= s.epochs(); epoch++) {
                Arrays.fill(failed, 0);

                FoldIn itemSide = new FoldIn(k, biases, mu, s.lambda(), p, bu, null, null, 0f, 0f);
                int[] itemStart = r.itemStart();
                workers.forEachChunk(n, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                    for (int i = from; i < to; i++) {
                        if (itemStart[i] == itemStart[i + 1]) {
                            zeroRow(q, bi, i, k);
                        } else if (itemSide.solve(r.itemUsers(), r.itemValues(), itemStart[i], itemStart[i + 1], scratch[w])) {
                            store(scratch[w], q, bi, i, k);
                        } else {
                            failed[w]++;
                        }
                    }
                });

                if (shared) {
                    TrusteeStep trusteeSide = new TrusteeStep(k, s.lambda(), s.trustWeight(), s.trustAlpha(), p,
                            NormalEquations.gram(p, m, k), t);
                    workers.forEachChunk(m, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                        for (int v = from; v < to; v++) {
                            if (t.inDegree(v) == 0) {
                                zeroRow(z, null, v, k);
                            } else if (trusteeSide.solve(v, scratch[w])) {
                                store(scratch[w], z, null, v, k);
                            } else {
                                failed[w]++;
                            }
                        }
                    });
                }

                FoldIn userSide = new FoldIn(k, biases, mu, s.lambda(), q, bi, z,
                        shared ? NormalEquations.gram(z, m, k) : null, s.trustWeight(), s.trustAlpha());
                int[] userStart = r.userStart();
                int[] outStart = t.outStart();
                workers.forEachChunk(m, ROWS_PER_CHUNK, MIN_PARALLEL_ROWS, (w, from, to) -> {
                    for (int u = from; u < to; u++) {
                        if (!knownUsers.get(u)) {
                            zeroRow(p, bu, u, k);
                        } else if (userSide.solve(r.userItems(), r.userValues(), userStart[u], userStart[u + 1],
                                t.trustees(), t.outWeights(), outStart[u], outStart[u + 1], scratch[w])) {
                            store(scratch[w], p, bu, u, k);
                        } else {
                            failed[w]++;
                        }
                    }
                });

                FittedModel current = new FittedModel(k, mu, p, bu, q, bi, z, knownUsers, knownItems, s, List.of());
                int failures = 0;
                for (int f : failed) {
                    failures += f;
                }
                EpochReport report = new EpochReport(epoch, Objective.value(data, current),
                        data.validation().rmse(current), failures);
                history.add(report);
                listener.onEpoch(report);
                if (best != null && best.stopAfter(report, s.patience(), p, bu, q, bi, z)) {
                    break;
                }
            }
        }
        if (best != null) {
            best.restore(p, bu, q, bi, z);
        }
        return new FittedModel(k, mu, p, bu, q, bi, z, knownUsers, knownItems, s, history);
    }

    private static void initialise(float[] f, int rows, int k, BitSet keep, SplittableRandom random, double sd) {
        for (int row = 0; row < rows; row++) {
            for (int a = 0; a < k; a++) {
                double g = random.nextDouble();
                double h = random.nextDouble();
                // Box–Muller from two uniforms, so the stream is the same on every JVM.
                double gaussian = Math.sqrt(-2 * Math.log1p(-g)) * Math.cos(2 * Math.PI * h);
                f[row * k + a] = keep.get(row) ? (float) (sd * gaussian) : 0f;
            }
        }
    }

    private static void zeroRow(float[] f, float[] bias, int row, int k) {
        for (int a = 0; a < k; a++) {
            f[row * k + a] = 0f;
        }
        if (bias != null) {
            bias[row] = 0f;
        }
    }

    private static void store(FoldIn.Scratch scratch, float[] f, float[] bias, int row, int k) {
        scratch.copyFactors(f, row * k);
        if (bias != null) {
            bias[row] = (float) scratch.bias();
        }
    }

    /** The factors of the epoch with the best validation RMSE so far, for early stopping. */
    private static final class Best {
        private double rmse = Double.POSITIVE_INFINITY;
        private int stale;
        private float[] p;
        private float[] bu;
        private float[] q;
        private float[] bi;
        private float[] z;

        boolean stopAfter(EpochReport report, int patience, float[] p, float[] bu, float[] q, float[] bi, float[] z) {
            if (report.validationRmse() < rmse) {
                rmse = report.validationRmse();
                stale = 0;
                this.p = p.clone();
                this.bu = bu.clone();
                this.q = q.clone();
                this.bi = bi.clone();
                this.z = z == null ? null : z.clone();
                return false;
            }
            stale++;
            return stale >= patience;
        }

        void restore(float[] p, float[] bu, float[] q, float[] bi, float[] z) {
            if (this.p == null) {
                return;
            }
            System.arraycopy(this.p, 0, p, 0, p.length);
            System.arraycopy(this.bu, 0, bu, 0, bu.length);
            System.arraycopy(this.q, 0, q, 0, q.length);
            System.arraycopy(this.bi, 0, bi, 0, bi.length);
            if (z != null) {
                System.arraycopy(this.z, 0, z, 0, z.length);
            }
        }
    }
}
