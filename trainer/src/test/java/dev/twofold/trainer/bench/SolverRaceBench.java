package dev.twofold.trainer.bench;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.fit.EpochReport;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.SolverKind;
import dev.twofold.trainer.fit.TrainingData;
import dev.twofold.trainer.fit.ValidationSet;
import dev.twofold.trainer.split.PerUserHoldout;
import dev.twofold.trainer.split.Split;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;

/**
 * Each solver's time to reach a validation RMSE on the same data: a planted community cut to
 * {@code ratings} rows, 20% of each user's ratings held out for validation; every solver runs
 * {@code epochs} epochs from the same start. The target is the best validation RMSE any solver
 * reached, plus {@code slack} (default 0.5%); the table gives the time and epoch at which each solver
 * first got within it (wall time, the per-epoch objective included). Every solver first runs a short
 * fit to warm the JIT up.
 *
 * <p>Arguments: {@code ratings=300000 rank=16 threads=2 epochs=30 slack=0.005 couplings=neighbour,none}.
 * Run with (the heap settings matter: the trainer benches hold a million ratings and their models)
 *
 * <pre>JAVA_OPTS="-Xms2g -Xmx8g" deploy/bench trainer dev.twofold.trainer.bench.SolverRaceBench [name=value ...]</pre>
 */
public final class SolverRaceBench {

    private SolverRaceBench() {
    }

    public static void main(String[] args) {
        Args a = new Args(args);
        int rank = a.integer("rank", 16);
        int threads = a.integer("threads", 2);
        int epochs = a.integer("epochs", 30);
        double slack = a.real("slack", 0.005f);
        TrainingData all = EpochBench.data(a.integer("ratings", 300_000));
        RatingMatrix r = all.ratings();
        int[] u = new int[r.nnz()];
        int[] i = new int[r.nnz()];
        float[] v = new float[r.nnz()];
        for (int user = 0, at = 0; user < r.numUsers(); user++) {
            for (int e = r.userStart()[user]; e < r.userStart()[user + 1]; e++, at++) {
                u[at] = user;
                i[at] = r.userItems()[e];
                v[at] = r.userValues()[e];
            }
        }
        Split split = new PerUserHoldout(0.2, 5).split(r.numUsers(), u, i, null);
        RatingMatrix train = RatingMatrix.of(r.numUsers(), r.numItems(), u, i, v, split.train());
        TrainingData data = new TrainingData(train, all.trust(),
                ValidationSet.of(u, i, v, split.test(), 1f, 5f));
        System.out.printf(Locale.ROOT, "data: %,d training ratings, %,d validation ratings, %,d users, %,d items; rank %d, "
                + "%d threads, %d epochs%n", train.nnz(), split.test().length, r.numUsers(), r.numItems(), rank, threads, epochs);
        for (SolverKind solver : SolverKind.values()) {
            // warm the JIT up so the solver that runs first is not charged for compiling everyone's code
            solver.create().fit(data, FitSettings.defaults().withRank(rank).withEpochs(3).withThreads(threads));
        }
        for (String name : a.text("couplings", "neighbour,none").split(",")) {
            Coupling coupling = Coupling.parse(name);
            FitSettings s = FitSettings.defaults().withRank(rank).withCoupling(coupling)
                    .withTrust(coupling.defaultTrustWeight(), FitSettings.DEFAULT_TRUST_ALPHA).withEpochs(epochs)
                    .withThreads(threads);
            List<double[]> curves = new ArrayList<>();
            double best = Double.POSITIVE_INFINITY;
            for (SolverKind solver : SolverKind.values()) {
                List<double[]> curve = new ArrayList<>();
                long t0 = System.nanoTime();
                solver.create().fit(data, s, (EpochReport e) -> curve.add(new double[] {(System.nanoTime() - t0) / 1e9,
                        e.validationRmse(), e.epoch()}));
                double[] flat = new double[curve.size() * 3];
                for (int x = 0; x < curve.size(); x++) {
                    System.arraycopy(curve.get(x), 0, flat, 3 * x, 3);
                    best = Math.min(best, curve.get(x)[1]);
                }
                curves.add(flat);
            }
            double target = best * (1 + slack);
            System.out.printf(Locale.ROOT, "%n%s coupling: target validation RMSE %.4f (best reached %.4f + %.1f%%)%n",
                    coupling.label(), target, best, 100 * slack);
            System.out.println("| solver | seconds to target | epoch | seconds per epoch | RMSE after all epochs |");
            System.out.println("|---|---|---|---|---|");
            for (int s2 = 0; s2 < curves.size(); s2++) {
                double[] c = curves.get(s2);
                int n = c.length / 3;
                String reached = "not reached";
                String epoch = "-";
                for (int x = 0; x < n; x++) {
                    if (c[3 * x + 1] <= target) {
                        reached = String.format(Locale.ROOT, "%.2f", c[3 * x]);
                        epoch = String.valueOf((int) c[3 * x + 2]);
                        break;
                    }
                }
                System.out.printf(Locale.ROOT, "| %s | %s | %s | %.3f | %.4f |%n", SolverKind.values()[s2].label(), reached,
                        epoch, c[3 * (n - 1)] / n, c[3 * (n - 1) + 1]);
            }
        }
    }
}
