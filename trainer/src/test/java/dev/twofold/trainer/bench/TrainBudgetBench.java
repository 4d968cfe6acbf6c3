package dev.twofold.trainer.bench;

import dev.twofold.db.progress.Progress;
import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.evaluate.Baselines;
import dev.twofold.trainer.evaluate.EvaluationSettings;
import dev.twofold.trainer.evaluate.Evaluator;
import dev.twofold.trainer.evaluate.Scorer;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.FittedModel;
import dev.twofold.trainer.fit.Solver;
import dev.twofold.trainer.fit.SolverKind;
import dev.twofold.trainer.fit.TrainingData;
import dev.twofold.trainer.split.PerUserHoldout;
import dev.twofold.trainer.split.Split;
import dev.twofold.trainer.sweep.Sweep;
import dev.twofold.trainer.sweep.SweepPoint;
import dev.twofold.trainer.sweep.SweepResult;
import java.util.Locale;

/**
 * The computing part of {@code twofold train} with default settings on 1,000,000 ratings (no
 * database: reading the snapshot and storing the model are measured elsewhere): the held-out split,
 * the validation split, the default sweep (ranks 4, 8, 16 × λ 0.01, 0.02, 0.04, early stopping), the
 * final fit, fitting the baselines, and the evaluation of the model and the baselines (one ranking pass).
 * Prints the time of each phase.
 *
 * <p>Arguments: {@code ratings=1000000 threads=2 solver=als}.
 * Run with (the heap settings matter: the trainer benches hold a million ratings and their models)
 *
 * <pre>JAVA_OPTS="-Xms2g -Xmx8g" deploy/bench trainer dev.twofold.trainer.bench.TrainBudgetBench [name=value ...]</pre>
 */
public final class TrainBudgetBench {

    private TrainBudgetBench() {
    }

    public static void main(String[] args) {
        Args a = new Args(args);
        int threads = a.integer("threads", 2);
        TrainingData all = EpochBench.data(a.integer("ratings", 1_000_000));
        Solver solver = SolverKind.parse(a.text("solver", "als")).create();
        long t0 = System.nanoTime();
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
        Split outer = new PerUserHoldout(0.2, 1).split(r.numUsers(), u, i, null);
        RatingMatrix train = RatingMatrix.of(r.numUsers(), r.numItems(), u, i, v, outer.train());
        RatingMatrix test = RatingMatrix.of(r.numUsers(), r.numItems(), u, i, v, outer.test());
        int[] rows = outer.train();
        int[] iu = new int[rows.length];
        int[] ii = new int[rows.length];
        for (int x = 0; x < rows.length; x++) {
            iu[x] = u[rows[x]];
            ii[x] = i[rows[x]];
        }
        Split inner = new PerUserHoldout(0.2, 2).split(r.numUsers(), iu, ii, null);
        int[] fitRows = new int[inner.train().length];
        int[] valRows = new int[inner.test().length];
        for (int x = 0; x < fitRows.length; x++) {
            fitRows[x] = rows[inner.train()[x]];
        }
        for (int x = 0; x < valRows.length; x++) {
            valRows[x] = rows[inner.test()[x]];
        }
        RatingMatrix fit = RatingMatrix.of(r.numUsers(), r.numItems(), u, i, v, fitRows);
        RatingMatrix validation = RatingMatrix.of(r.numUsers(), r.numItems(), u, i, v, valRows);
        long t1 = System.nanoTime();
        EvaluationSettings ev = EvaluationSettings.defaults(1f, 5f).withThreads(threads);
        FitSettings base = FitSettings.defaults().withThreads(threads).withPatience(2);
        SweepResult sweep = Sweep.run(Sweep.withValidation(new TrainingData(fit, all.trust(), null), validation, 1f, 5f),
                validation, solver, base, Sweep.DEFAULT_RANKS, Sweep.DEFAULT_LAMBDAS, ev, false, Progress.forConsole("budget"));
        SweepPoint best = sweep.best();
        long t2 = System.nanoTime();
        FitSettings chosen = base.withPatience(0).withRank(best.rank()).withLambda(best.lambda()).withEpochs(best.bestEpoch());
        TrainingData data = new TrainingData(train, all.trust(), null);
        FittedModel model = solver.fit(data, chosen);
        long t3 = System.nanoTime();
        Evaluator evaluator = new Evaluator(train, test, ev);
        Baselines baselines = Baselines.fit(data, chosen, train.countAtLeast(4f), solver);
        long t4 = System.nanoTime();
        Baselines.Judgement judged = baselines.judge(evaluator, Scorer.of(model), null);
        double rmse = judged.model().overall().rmse();
        long t5 = System.nanoTime();
        System.out.print(sweep.table());
        System.out.println(sweep.why());
        System.out.printf(Locale.ROOT, "splits %.1f s, sweep %.1f s, fit %.1f s, baselines %.1f s, evaluate %.1f s: "
                + "total %.1f s; held-out RMSE %.4f (without trust %.4f)%n", (t1 - t0) / 1e9, (t2 - t1) / 1e9,
                (t3 - t2) / 1e9, (t4 - t3) / 1e9, (t5 - t4) / 1e9, (t5 - t0) / 1e9, rmse,
                judged.baselines().withoutTrust().overall().rmse());
    }
}
