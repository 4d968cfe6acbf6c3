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
import dev.twofold.trainer.fit.AlsSolver;
import dev.twofold.trainer.fit.FittedModel;
import dev.twofold.trainer.fit.Solver;
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
 *   <li><b>split</b> off the held-out ratings ({@link TrainSettings#holdout()}, a fixed split seed so
 *       every retrain is judged on the same rows) and build the matrices; register a new model
 *       version with status {@code training};
 *   <li><b>fit</b> the model on the training ratings and all trust edges;
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

    public TrainJob(Database database, TrainSettings settings) {
        this(database, settings, new AlsSolver());
    }

    public TrainJob(Database database, TrainSettings settings, Solver solver) {
        this.database = database;
        this.settings = settings;
        this.solver = solver;
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
        ModelRegistry registry = new ModelRegistry(database);
        long id = registry.create(draft(snapshot, (float) data.train().mean(), counts));
        t = lap(phases, "split", t);
        try {
            FittedModel model = solver.fit(data.trainingData(), settings.fit());
            requireFinite(model);
            t = lap(phases, "fit", t);

            SegmentFigures figures = evaluator.evaluate(Scorer.of(model));
            t = lap(phases, "evaluate", t);
            float[] popularity = data.train().countAtLeast(settings.relevance());
            BaselineFigures baselines = Baselines.evaluate(evaluator, data.trainingData(), settings.fit(), popularity,
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
                    activeId, activeRmse, model.history());
            ModelFactors factors = StoredModel.factorsOf(model, popularity);
            registry.storeFactors(id, factors);
            String metrics = MetricsJson.metrics(report, settings);
            if (decision == Decision.PROMOTED) {
                registry.finish(id, "candidate", metrics, null);
                registry.promote(id);
            } else {
                registry.finish(id, "rejected", metrics, reason);
            }
            lap(phases, "store", t);
            return new TrainReport(id, decision, reason, counts, Collections.unmodifiableMap(new LinkedHashMap<>(phases)),
                    settings.k(), figures, baselines, activeId, activeRmse, model.history());
        } catch (RuntimeException | Error e) {
            try {
                registry.finish(id, "failed", "{}", describe(e));
            } catch (RuntimeException f) {
                e.addSuppressed(f);
            }
            throw e;
        }
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

    private ModelHeader draft(Snapshot snapshot, float globalMean, TrainReport.Counts counts) {
        return new ModelHeader(0, "training", settings.fit().rank(), settings.fit().coupling().label(),
                settings.fit().lambda(), settings.fit().trustWeight(), settings.fit().trustAlpha(), settings.scale().min(),
                settings.scale().max(), globalMean, snapshot.numUsers(), snapshot.numItems(), Instant.now(), null,
                MetricsJson.params(settings), "{}", MetricsJson.counts(counts), null);
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
