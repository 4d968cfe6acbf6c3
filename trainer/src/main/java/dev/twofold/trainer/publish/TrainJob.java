package dev.twofold.trainer.publish;

import dev.twofold.db.connect.Database;
import dev.twofold.db.registry.ModelFactors;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.db.snapshot.Snapshot;
import dev.twofold.db.snapshot.SnapshotReader;
import dev.twofold.trainer.TrainerException;
import dev.twofold.trainer.evaluate.BaselineFigures;
import dev.twofold.trainer.evaluate.Baselines;
import dev.twofold.trainer.evaluate.Evaluator;
import dev.twofold.trainer.evaluate.Scorer;
import dev.twofold.trainer.evaluate.SegmentFigures;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.FittedModel;
import dev.twofold.trainer.fit.Solver;
import dev.twofold.trainer.progress.Progress;
import dev.twofold.trainer.sweep.Sweep;
import dev.twofold.trainer.sweep.SweepPoint;
import dev.twofold.trainer.sweep.SweepResult;
import java.time.Duration;
import java.time.Instant;
import java.util.Collections;
import java.util.LinkedHashMap;
import java.util.Locale;
import java.util.Map;
import java.util.Optional;

/**
 * One retrain, from the database back to the database:
 *
 * <ol>
 *   <li><b>read</b> a consistent snapshot of all ratings and trust edges;
 *   <li><b>split</b> off the held-out ratings ({@link TrainSettings#holdout()}, by user or by time, a
 *       fixed split seed so every retrain is judged on the same rows) and build the matrices;
 *   <li><b>tune</b>: when rank or λ is to be chosen, or early stopping is on, cut a validation split
 *       out of the training ratings (the same way, another seed), sweep the settings on it and
 *       keep the one with the lowest validation RMSE, and its best epoch count; register a new
 *       model version with status {@code training};
 *   <li><b>fit</b> the model on all training ratings and all trust edges;
 *   <li><b>evaluate</b> it on the held-out ratings, and the <b>baselines</b> (global mean, biases only,
 *       most popular, the same model without trust);
 *   <li><b>compare</b> with the active model's stored factors on the same held-out rows;
 *   <li><b>store</b> the factors, with item popularity = the number of training ratings at or above
 *       the relevance threshold (what serving uses for people nobody knows), and finish the version:
 *       promoted to active when it is the first model or its held-out RMSE ≤ the active model's ×
 *       (1 + tolerance), else {@code rejected} with the reason.
 * </ol>
 *
 * Any failure after the version was registered marks it {@code failed} with the reason and is
 * rethrown; the active model never changes unless the whole job succeeded.
 */
public final class TrainJob {

    static final int MAX_REASON_CHARS = 500;

    private final Database database;
    private final TrainSettings settings;
    private final Solver solver;
    private final Progress progress;

    public TrainJob(Database database, TrainSettings settings) {
        this(database, settings, settings.solver().create(), Progress.silent());
    }

    public TrainJob(Database database, TrainSettings settings, Solver solver) {
        this(database, settings, solver, Progress.silent());
    }

    /** @param progress shows how far the sweep and the fit have come */
    public TrainJob(Database database, TrainSettings settings, Solver solver, Progress progress) {
        this.database = database;
        this.settings = settings;
        this.solver = solver;
        this.progress = progress;
    }

    public TrainReport run() {
        Map<String, Duration> phases = new LinkedHashMap<>();
        long t = System.nanoTime();
        Snapshot snapshot = new SnapshotReader(database).read();
        t = lap(phases, "read", t);
        if (snapshot.numRatings() == 0) {
            throw new TrainerException("there are no ratings to train on; import ratings first (twofold import)");
        }
        HeldOutData data = HeldOutData.of(snapshot, settings);
        Evaluator evaluator = new Evaluator(data.train(), data.test(), settings.evaluation());
        TrainReport.Counts counts = new TrainReport.Counts(snapshot.numUsers(), snapshot.numItems(),
                snapshot.numRatings(), snapshot.numTrustEdges(), data.train().nnz(), data.test().nnz(),
                evaluator.coldUsersWithHeldOut());
        t = lap(phases, "split", t);
        Tuning tuning = tune(data);
        TrainSettings chosen = settings.withFit(tuning.fit());
        if (tuning.sweep() != null) {
            t = lap(phases, "tune", t);
        }
        ModelRegistry registry = new ModelRegistry(database);
        long id = registry.create(draft(chosen, snapshot, (float) data.train().mean(), counts));
        try {
            Progress.Task fitting = progress.start("fit", chosen.fit().epochs());
            FittedModel model = solver.fit(data.trainingData(), chosen.fit(), e -> fitting.advance(e.epoch(),
                    String.format(Locale.ROOT, "objective %.6g", e.objective())));
            fitting.finish("");
            requireFinite(model);
            t = lap(phases, "fit", t);

            SegmentFigures figures = evaluator.evaluate(Scorer.of(model));
            t = lap(phases, "evaluate", t);
            progress.note("fitting and judging the baselines");
            float[] popularity = data.train().countAtLeast(settings.relevance());
            BaselineFigures baselines = Baselines.evaluate(evaluator, data.trainingData(), chosen.fit(), popularity,
                    solver);
            t = lap(phases, "baselines", t);

            Optional<ModelHeader> active = registry.active();
            Long activeId = null;
            double activeRmse = Double.NaN;
            if (active.isPresent()) {
                activeId = active.get().id();
                FittedModel live = StoredModel.scorerOf(active.get(), registry.loadFactors(activeId),
                        snapshot.numUsers(), snapshot.numItems());
                activeRmse = evaluator.errors(Scorer.of(live)).overall().rmse();
            }
            double candidateRmse = figures.overall().rmse();
            String reason = rejection(activeId, activeRmse, candidateRmse);
            Decision decision = reason == null ? Decision.PROMOTED : Decision.REJECTED;
            t = lap(phases, "compare", t);

            TrainReport report = new TrainReport(id, decision, reason, counts, phases, settings.k(), figures, baselines,
                    activeId, activeRmse, model.history(), tuning.why(), tuning.sweep());
            ModelFactors factors = StoredModel.factorsOf(model, popularity);
            registry.storeFactors(id, factors);
            String metrics = MetricsJson.metrics(report, chosen);
            if (decision == Decision.PROMOTED) {
                registry.finish(id, "candidate", metrics, null);
                registry.promote(id);
            } else {
                registry.finish(id, "rejected", metrics, reason);
            }
            lap(phases, "store", t);
            return new TrainReport(id, decision, reason, counts, Collections.unmodifiableMap(new LinkedHashMap<>(phases)),
                    settings.k(), figures, baselines, activeId, activeRmse, model.history(), tuning.why(), tuning.sweep());
        } catch (RuntimeException | Error e) {
            try {
                registry.finish(id, "failed", "{}", describe(e));
            } catch (RuntimeException f) {
                e.addSuppressed(f);
            }
            throw e;
        }
    }

    /** The fit settings to use, and why: the given ones, or a sweep's choice on a validation split. */
    record Tuning(FitSettings fit, String why, SweepResult sweep) {
    }

    Tuning tune(HeldOutData data) {
        FitSettings fit = settings.fit().withPatience(0);
        if (!settings.sweeps() && settings.patience() == 0) {
            return new Tuning(fit, null, null);
        }
        HeldOutData.Validation v = data.validation(settings);
        if (v.rows().nnz() == 0) {
            String why = "no validation split: too few ratings per user to hold any out; fitted rank " + fit.rank()
                    + ", lambda " + fit.lambda() + " for " + fit.epochs() + " epochs";
            progress.note(why);
            return new Tuning(fit, why, null);
        }
        int[] ranks = settings.sweepRanks().length > 0 ? settings.sweepRanks() : new int[] {fit.rank()};
        float[] lambdas = settings.sweepLambdas().length > 0 ? settings.sweepLambdas() : new float[] {fit.lambda()};
        FitSettings base = fit.withPatience(Math.max(1, settings.patience()));
        SweepResult sweep = Sweep.run(Sweep.withValidation(v.fit(), v.rows(), settings.scale().min(), settings.scale().max()),
                v.rows(), solver, base, ranks, lambdas, settings.evaluation(), progress);
        SweepPoint best = sweep.best();
        FitSettings chosen = fit.withRank(best.rank()).withLambda(best.lambda())
                .withEpochs(settings.patience() > 0 ? best.bestEpoch() : fit.epochs());
        String why;
        if (settings.sweeps()) {
            why = String.format(Locale.ROOT, "%s given: swept %d settings on a validation split of the training ratings "
                    + "(%,d fitting, %,d validation); %s", settings.sweepRanks().length > 0
                    ? (settings.sweepLambdas().length > 0 ? "no --rank or --lambda" : "no --rank") : "no --lambda",
                    sweep.points().size(), v.fit().ratings().nnz(), v.rows().nnz(), sweep.why());
            if (settings.patience() > 0) {
                why += String.format(Locale.ROOT, "; the model is fitted for %d epochs", chosen.epochs());
            }
        } else {
            why = String.format(Locale.ROOT, "early stopping on a validation split of the training ratings: validation "
                    + "RMSE was lowest (%.4f) at epoch %d of %d, so the model is fitted for %d epochs",
                    best.validationRmse(), best.bestEpoch(), best.epochsRun(), chosen.epochs());
        }
        progress.note(why);
        return new Tuning(chosen, why, sweep);
    }

    /** Null when the candidate should be promoted, else why not. */
    String rejection(Long activeId, double activeRmse, double candidateRmse) {
        if (activeId == null) {
            return null;
        }
        if (!Double.isFinite(candidateRmse) || !Double.isFinite(activeRmse)) {
            return "no held-out ratings to compare it with active model " + activeId + "; promote it by hand if wanted";
        }
        double limit = activeRmse * (1 + settings.promoteTolerance());
        if (candidateRmse <= limit) {
            return null;
        }
        return String.format(Locale.ROOT, "held-out RMSE %.4f is worse than active model %d's %.4f by more than %.1f%%",
                candidateRmse, activeId, activeRmse, 100 * settings.promoteTolerance());
    }

    private static ModelHeader draft(TrainSettings chosen, Snapshot snapshot, float globalMean, TrainReport.Counts counts) {
        FitSettings f = chosen.fit();
        return new ModelHeader(0, "training", f.rank(), f.coupling().label(), f.lambda(), f.trustWeight(), f.trustAlpha(),
                chosen.scale().min(), chosen.scale().max(), globalMean, snapshot.numUsers(), snapshot.numItems(),
                Instant.now(), null, MetricsJson.params(chosen), "{}", MetricsJson.counts(counts), null);
    }

    private static void requireFinite(FittedModel model) {
        if (!finite(model.userFactors()) || !finite(model.userBias()) || !finite(model.itemFactors())
                || !finite(model.itemBias()) || (model.trustFactors() != null && !finite(model.trustFactors()))) {
            throw new TrainerException("the fit produced non-finite factors; raise --lambda or lower --rank");
        }
    }

    private static boolean finite(float[] values) {
        for (float v : values) {
            if (!Float.isFinite(v)) {
                return false;
            }
        }
        return true;
    }

    static String describe(Throwable e) {
        String text = e.getClass().getSimpleName() + ": " + e.getMessage();
        return text.length() <= MAX_REASON_CHARS ? text : text.substring(0, MAX_REASON_CHARS - 1) + "…";
    }

    private static long lap(Map<String, Duration> phases, String name, long since) {
        long now = System.nanoTime();
        phases.put(name, Duration.ofNanos(now - since));
        return now;
    }
}
