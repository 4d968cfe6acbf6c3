package dev.twofold.trainer.bench;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.fit.EpochReport;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.SolverKind;
import dev.twofold.trainer.fit.TrainingData;
import dev.twofold.trainer.planted.CommunitySpec;
import dev.twofold.trainer.planted.CookingCommunity;
import dev.twofold.trainer.planted.PlantedCommunity;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.CommonOps_DDRM;
import org.ejml.dense.row.CommonOps_MT_DDRM;
import org.ejml.dense.row.RandomMatrices_DDRM;

/**
 * One ALS epoch on exactly 1,000,000 ratings of a planted cooking community at rank 32, with 2
 * threads, for each coupling: wall time per epoch (median of the epochs after the first two, which
 * warm up the JIT), the model's floating-point work per epoch and the attained GFLOP/s, beside
 * EJML's dense matrix multiply measured in the same run (single-threaded and with 2 threads).
 *
 * <p>Arguments: {@code rank=32 threads=2 epochs=7 ratings=1000000 couplings=none,shared,neighbour solver=als}.
 * Run with (the heap settings matter: the trainer benches hold a million ratings and their models)
 *
 * <pre>JAVA_OPTS="-Xms2g -Xmx8g" deploy/bench trainer dev.twofold.trainer.bench.EpochBench [name=value ...]</pre>
 */
public final class EpochBench {

    private EpochBench() {
    }

    public static void main(String[] args) {
        Args a = new Args(args);
        int rank = a.integer("rank", 32);
        int threads = a.integer("threads", 2);
        int epochs = a.integer("epochs", 7);
        int ratings = a.integer("ratings", 1_000_000);
        SolverKind solver = SolverKind.parse(a.text("solver", "als"));
        System.out.printf(Locale.ROOT, "machine: %d processors, %s%n", Runtime.getRuntime().availableProcessors(),
                System.getProperty("java.vm.name") + " " + System.getProperty("java.version"));

        double ejml1 = ejmlGflops(1);
        double ejml2 = ejmlGflops(threads);
        System.out.printf(Locale.ROOT, "EJML dense multiply 1000x1000: %.2f GFLOP/s (1 thread), %.2f GFLOP/s (%d threads)%n",
                ejml1, ejml2, threads);

        TrainingData data = data(ratings);
        RatingMatrix r = data.ratings();
        System.out.printf(Locale.ROOT, "data: %,d ratings, %,d users, %,d items, %,d trust edges%n", r.nnz(),
                r.numUsers(), r.numItems(), data.trust().numEdges());
        // a short fit first, so the first coupling measured is not charged for compiling the code
        solver.create().fit(data, FitSettings.defaults().withRank(rank).withEpochs(3).withThreads(threads));
        for (String name : a.text("couplings", "none,shared,neighbour").split(",")) {
            Coupling coupling = Coupling.parse(name);
            FitSettings s = FitSettings.defaults().withRank(rank).withCoupling(coupling)
                    .withTrust(coupling.defaultTrustWeight(), FitSettings.DEFAULT_TRUST_ALPHA).withEpochs(epochs)
                    .withThreads(threads);
            List<Long> stamps = new ArrayList<>();
            stamps.add(System.nanoTime());
            solver.create().fit(data, s, (EpochReport e) -> stamps.add(System.nanoTime()));
            double[] seconds = new double[stamps.size() - 1];
            for (int e = 0; e < seconds.length; e++) {
                seconds[e] = (stamps.get(e + 1) - stamps.get(e)) / 1e9;
            }
            double[] warm = Arrays.copyOfRange(seconds, Math.min(2, seconds.length - 1), seconds.length);
            Arrays.sort(warm);
            double median = warm[warm.length / 2];
            double flops = flopsPerEpoch(data, rank, coupling);
            System.out.printf(Locale.ROOT, "%s %s rank %d, %d threads: epoch %.3f s (median of %d warm epochs; all: %s), "
                    + "%.2f GFLOP per epoch, %.2f GFLOP/s%n", solver.label(), coupling.label(), rank, threads, median,
                    warm.length, Arrays.toString(Arrays.stream(seconds).map(x -> Math.round(x * 1000) / 1000.0).toArray()),
                    flops / 1e9, flops / median / 1e9);
        }
    }

    /** The first {@code ratings} rows of a large planted community (and its follows among those cooks). */
    static TrainingData data(int ratings) {
        CommunitySpec spec = CommunitySpec.defaults().withSize(Math.max(100, ratings / 45), Math.max(50, ratings / 200));
        PlantedCommunity c = CookingCommunity.generate(spec);
        int rows = Math.min(ratings, c.numRatings());
        int[] positions = new int[rows];
        for (int p = 0; p < rows; p++) {
            positions[p] = p;
        }
        RatingMatrix r = RatingMatrix.of(c.numCooks(), c.numRecipes(), c.ratingUser(), c.ratingItem(), c.rating(), positions);
        return new TrainingData(r, TrustGraph.of(c.numCooks(), c.truster(), c.trustee(), c.trustWeight()), null);
    }

    /**
     * Multiply-adds of one ALS epoch counted as 2 flops: assembling Σ q̃q̃ᵀ (upper triangle) and c for
     * every rating in both half-steps, Cholesky factorisation (K³/3) and the two triangular solves (K²)
     * per row, plus the trust terms of the coupling and the objective evaluated after the epoch.
     */
    static double flopsPerEpoch(TrainingData data, int k, Coupling coupling) {
        RatingMatrix r = data.ratings();
        double dim = k + 1;
        double perRating = dim * (dim + 1) + 2 * dim;
        double perSolve = 2 * dim * dim * dim / 3 + 2 * dim * dim;
        double rows = r.numUsers() + r.numItems();
        double f = 2 * r.nnz() * perRating + rows * perSolve + 2.0 * r.nnz() * k;
        double edges = data.trust().numEdges();
        if (coupling == Coupling.SHARED) {
            // Z step: PᵀP and each trustee's edges and solve; user step: ZᵀZ and each truster's edges
            f += 2 * r.numUsers() * (double) k * k + 2 * edges * (k * k + 2.0 * k) + r.numUsers() * (2.0 * k * k * k / 3);
        } else if (coupling == Coupling.NEIGHBOUR) {
            // residual, pull and the line search: a few passes over the edges and ratings of k values
            f += 8 * edges * k + 6.0 * r.nnz() * k;
        }
        return f;
    }

    private static double ejmlGflops(int threads) {
        int n = 1000;
        DMatrixRMaj a = RandomMatrices_DDRM.rectangle(n, n, -1, 1, new java.util.Random(1));
        DMatrixRMaj b = RandomMatrices_DDRM.rectangle(n, n, -1, 1, new java.util.Random(2));
        DMatrixRMaj c = new DMatrixRMaj(n, n);
        double best = Double.POSITIVE_INFINITY;
        for (int rep = 0; rep < 5; rep++) {
            long t0 = System.nanoTime();
            if (threads > 1) {
                CommonOps_MT_DDRM.mult(a, b, c);
            } else {
                CommonOps_DDRM.mult(a, b, c);
            }
            best = Math.min(best, (System.nanoTime() - t0) / 1e9);
        }
        return 2.0 * n * n * n / best / 1e9;
    }
}
