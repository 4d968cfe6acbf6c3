package dev.twofold.trainer.publish;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.twofold.db.connect.Database;
import dev.twofold.db.internal.PausePoint;
import dev.twofold.db.progress.Progress;
import dev.twofold.db.registry.ModelFactors;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.db.registry.RetrainLock;
import dev.twofold.db.snapshot.Snapshot;
import dev.twofold.db.snapshot.SnapshotReader;
import dev.twofold.trainer.TrainerException;
import dev.twofold.trainer.evaluate.Baselines;
import dev.twofold.trainer.evaluate.Evaluator;
import dev.twofold.trainer.evaluate.Scorer;
import dev.twofold.trainer.evaluate.SegmentFigures;
import dev.twofold.trainer.fit.EpochListener;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.FittedModel;
import dev.twofold.trainer.fit.Solver;
import dev.twofold.trainer.sweep.Sweep;
import dev.twofold.trainer.sweep.SweepPoint;
import dev.twofold.trainer.sweep.SweepResult;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Collections;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Optional;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * One retrain, from the database back to the database:
 *
 * <ol>
 *   <li><b>lock</b>: take the {@link RetrainLock} or stop at once (exit 75); versions left
 *       {@code training} by a trainer that died are marked {@code failed};
 *   <li><b>read</b> a consistent snapshot of all ratings and trust edges;
 *   <li><b>split</b> off the held-out ratings ({@link TrainSettings#holdout()}, by user or by time, a
 *       fixed split seed so every retrain is judged on the same rows) and build the matrices;
 *   <li><b>tune</b>: when rank or λ is to be chosen, or early stopping is on, cut a validation split
 *       out of the training ratings (the same way, another seed), sweep the settings on it and
 *       keep the one with the lowest validation RMSE, and its best epoch count; register a new
 *       model version with status {@code training};
 *   <li><b>fit</b> the model on all training ratings and all trust edges;
 *   <li><b>baselines</b>: fit the biases-only model and the same model without trust;
 *   <li><b>live</b>: load the live model's stored factors, if there is a live model;
 *   <li><b>evaluate</b> the model, the baselines (global mean, biases only, most popular, without
 *       trust) and the live model on the same held-out ratings with the same figures, ranking them
 *       all in one pass ({@link Baselines#judge});
 *   <li><b>compare</b>: the {@link QualityGate} decides whether the candidate may replace the live model;
 *   <li><b>store</b> the factors, with item popularity = the number of training ratings at or above
 *       the relevance threshold (what serving uses for people nobody knows);
 *   <li><b>promote</b> per {@link PromotionPolicy}: {@code auto} promotes when the gate passes and
 *       stores the version as {@code rejected} with the gate's reason otherwise; {@code never} keeps
 *       a {@code candidate}; {@code always} promotes. A promotion moves the pointer only if the live
 *       model is still the one the candidate was judged against;
 *   <li><b>retention</b>: delete old versions ({@link dev.twofold.db.registry.Retention}).
 * </ol>
 *
 * Any failure after the version was registered marks it {@code failed} with the reason and is
 * rethrown. The active model changes only in the one transaction that moves the pointer, so a
 * trainer that dies at any point (kill -9 included) leaves it as it was; its version stays
 * {@code training} until the next run fails it.
 */
public final class TrainJob {

    /** The command the lock holder is shown as. */
    public static final String LOCK_COMMAND = "twofold train";
    static final int MAX_REASON_CHARS = 500;

    private static final Logger LOG = LoggerFactory.getLogger(TrainJob.class);
    private static final ObjectMapper JSON = new ObjectMapper();

    private final Database database;
    private final TrainSettings settings;
    private final PublishSettings publish;
    private final Solver solver;
    private final Progress progress;
    private volatile Long modelId;

    public TrainJob(Database database, TrainSettings settings) {
        this(database, settings, PublishSettings.defaults(), settings.solver().create(), Progress.silent());
    }

    public TrainJob(Database database, TrainSettings settings, Solver solver) {
        this(database, settings, PublishSettings.defaults(), solver, Progress.silent());
    }

    public TrainJob(Database database, TrainSettings settings, PublishSettings publish) {
        this(database, settings, publish, settings.solver().create(), Progress.silent());
    }

    public TrainJob(Database database, TrainSettings settings, PublishSettings publish, Solver solver) {
        this(database, settings, publish, solver, Progress.silent());
    }

    /** @param progress shows how far the sweep and the fit have come */
    public TrainJob(Database database, TrainSettings settings, PublishSettings publish, Solver solver,
            Progress progress) {
        this.database = database;
        this.settings = settings;
        this.publish = publish;
        this.solver = solver;
        this.progress = progress;
    }

    /** The version this run registered, once it has (so a caller can name it when the run fails). */
    public Optional<Long> modelId() {
        return Optional.ofNullable(modelId);
    }

    /**
     * @throws dev.twofold.db.registry.RetrainLockedException (exit 75) when another retrain runs
     */
    public TrainReport run() {
        long t = System.nanoTime();
        try (RetrainLock lock = RetrainLock.acquire(database, LOCK_COMMAND)) {
            PausePoint.reached("lock");
            return runLocked(lock, t);
        }
    }

    private TrainReport runLocked(RetrainLock lock, long started) {
        Map<String, Duration> phases = new LinkedHashMap<>();
        ModelRegistry registry = new ModelRegistry(database);
        List<Long> recovered = registry.failOrphans(lock);
        if (!recovered.isEmpty()) {
            LOG.warn("marked model(s) {} failed: {}", recovered, ModelRegistry.ORPHAN_REASON);
        }
        long t = lap(phases, "lock", started);
        Snapshot snapshot = new SnapshotReader(database).read();
        t = lap(phases, "read", t);
        LOG.info("read {} ratings and {} trust edges of {} users and {} items", snapshot.numRatings(),
                snapshot.numTrustEdges(), snapshot.numUsers(), snapshot.numItems());
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
        long id = registry.create(draft(chosen, snapshot, (float) data.train().mean(), counts));
        modelId = id;
        LOG.info("model {}: training on {} ratings, {} held out", id, counts.trainRatings(), counts.heldOutRatings());
        TrainReport report;
        try {
            Progress.Task fitting = progress.start("fit", chosen.fit().epochs());
            FittedModel model = solver.fit(data.trainingData(), chosen.fit(), epochs(fitting));
            fitting.finish("");
            requireFinite(model);
            t = lap(phases, "fit", t);

            progress.note("fitting the baselines");
            float[] popularity = data.train().countAtLeast(settings.relevance());
            Baselines baselines = Baselines.fit(data.trainingData(), chosen.fit(), popularity, solver);
            t = lap(phases, "baselines", t);

            Optional<ModelHeader> active = registry.active();
            Long liveId = null;
            Scorer liveScorer = null;
            List<String> notes = new ArrayList<>();
            if (active.isPresent()) {
                liveId = active.get().id();
                liveScorer = Scorer.of(StoredModel.scorerOf(active.get(), registry.loadFactors(liveId),
                        snapshot.numUsers(), snapshot.numItems()));
                splitNote(active.get()).ifPresent(notes::add);
            }
            t = lap(phases, "live", t);

            progress.note("ranking every item for every user with held-out favourites: the model, its baselines"
                    + (liveId == null ? "" : " and live model " + liveId));
            Baselines.Judgement judged = baselines.judge(evaluator, Scorer.of(model), liveScorer);
            SegmentFigures figures = judged.model();
            SegmentFigures live = judged.live();
            t = lap(phases, "evaluate", t);

            QualityGate.Verdict verdict = publish.gate().judge(figures.overall(), live == null ? null : live.overall(),
                    liveId == null ? 0 : liveId, settings.k());
            Decision decision = decide(verdict);
            String reason = reason(decision, verdict);
            t = lap(phases, "compare", t);
            LOG.info("model {}: gate {} ({}); decision {}", id, verdict.passes() ? "passed" : "failed", verdict.reason(),
                    decision.label());

            registry.storeFactors(id, StoredModel.factorsOf(model, popularity));
            t = lap(phases, "store", t);

            report = new TrainReport(id, decision, reason, chosen, publish, counts, phases, figures, judged.baselines(), liveId,
                    decision == Decision.PROMOTED ? Long.valueOf(id) : liveId, live, verdict, List.copyOf(notes), recovered,
                    List.of(), model.history(), tuning.why(), tuning.sweep());
            if (decision == Decision.PROMOTED) {
                registry.finish(id, ModelRegistry.CANDIDATE, MetricsJson.metrics(report), reason);
                PausePoint.reached("promote");
                lock.verifyHeld();
                if (!registry.promoteIfActive(id, liveId)) {
                    Long now = registry.active().map(ModelHeader::id).orElse(null);
                    reason = "the active model changed while this retrain ran (it was judged against "
                            + (liveId == null ? "no model" : "model " + liveId) + ", now model " + now
                            + " is active); kept as a candidate: compare and promote it by hand";
                    report = withDecision(report, Decision.CANDIDATE, reason, now);
                    registry.annotate(id, MetricsJson.metrics(report), reason);
                }
            } else {
                String status = decision == Decision.REJECTED ? ModelRegistry.REJECTED : ModelRegistry.CANDIDATE;
                registry.finish(id, status, MetricsJson.metrics(report), reason);
            }
            t = lap(phases, "promote", t);
        } catch (RuntimeException | Error e) {
            try {
                registry.finish(id, ModelRegistry.FAILED, "{}", describe(e));
            } catch (RuntimeException f) {
                e.addSuppressed(f);
            }
            throw e;
        }
        List<Long> deleted = List.of();
        try {
            deleted = registry.retain(publish.retention().keep());
        } catch (RuntimeException e) {
            // the model is stored and the decision made; a failed clean-up is for the next run
            LOG.warn("retention after model {} failed; the next run tries again: {}", id, e.toString());
        }
        lap(phases, "retention", t);
        return new TrainReport(id, report.decision(), report.reason(), report.settings(), publish, counts,
                Collections.unmodifiableMap(new LinkedHashMap<>(phases)), report.model(), report.baselines(),
                report.liveModelId(), report.activeModelId(), report.live(), report.verdict(), report.notes(), recovered,
                deleted, report.history(), report.tuning(), report.sweep());
    }

    /**
     * The fit settings to use, and why: the given ones, or a sweep's choice on a validation split. The
     * choice needs only the validation RMSE, so the sweep skips precision@k (a quarter of its time at
     * 1,000,000 ratings); {@code twofold sweep} reports both.
     */
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
                v.rows(), solver, base, ranks, lambdas, settings.evaluation(), false, progress);
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

    private Decision decide(QualityGate.Verdict verdict) {
        return switch (publish.policy()) {
            case AUTO -> verdict.passes() ? Decision.PROMOTED : Decision.REJECTED;
            case NEVER -> Decision.CANDIDATE;
            case ALWAYS -> Decision.PROMOTED;
        };
    }

    private String reason(Decision decision, QualityGate.Verdict verdict) {
        String reason = switch (publish.policy()) {
            case AUTO -> (verdict.passes() ? "quality gate passed: " : "quality gate failed: ") + verdict.reason();
            case NEVER -> "--promote never: kept as a candidate; the quality gate " + (verdict.passes() ? "passed" : "failed")
                    + ": " + verdict.reason();
            case ALWAYS -> "--promote always" + (verdict.passes() ? "; the quality gate passed: "
                    : "; promoted although the quality gate failed: ") + verdict.reason();
        };
        return clip(reason);
    }

    private static TrainReport withDecision(TrainReport r, Decision decision, String reason, Long active) {
        return new TrainReport(r.modelId(), decision, reason, r.settings(), r.publish(), r.counts(), r.phases(), r.model(),
                r.baselines(), r.liveModelId(), active, r.live(), r.verdict(), r.notes(), r.recovered(), r.deleted(),
                r.history(), r.tuning(), r.sweep());
    }

    /** A caveat when the live model was split differently: it may have trained on some of these held-out rows. */
    private Optional<String> splitNote(ModelHeader live) {
        try {
            JsonNode params = JSON.readTree(live.paramsJson());
            JsonNode holdout = params.get("holdout");
            JsonNode seed = params.get("splitSeed");
            if (holdout == null || seed == null) {
                return Optional.of("live model " + live.id() + " records no held-out split; it may have trained on some of"
                        + " these held-out rows, which favours it");
            }
            if (holdout.asDouble() != settings.holdout() || seed.asLong() != settings.splitSeed()) {
                return Optional.of(String.format(Locale.ROOT, "live model %d was split with holdout %s and seed %d, this"
                        + " run with %s and %d: it may have trained on some of these held-out rows, which favours it",
                        live.id(), holdout.asText(), seed.asLong(), settings.holdout(), settings.splitSeed()));
            }
            return Optional.empty();
        } catch (Exception e) {
            return Optional.of("live model " + live.id() + " has unreadable parameters: " + e.getMessage());
        }
    }

    /** Shows each epoch's progress and stops at the test pause point {@code fit} after the first one. */
    private static EpochListener epochs(Progress.Task fitting) {
        return report -> {
            fitting.advanceAndLog(report.epoch(), String.format(Locale.ROOT, "epoch %d objective %.6g", report.epoch(),
                    report.objective()));
            if (report.epoch() == 1) {
                PausePoint.reached("fit");
            }
        };
    }

    private ModelHeader draft(TrainSettings chosen, Snapshot snapshot, float globalMean, TrainReport.Counts counts) {
        FitSettings f = chosen.fit();
        return new ModelHeader(0, ModelRegistry.TRAINING, f.rank(), f.coupling().label(), f.lambda(), f.trustWeight(),
                f.trustAlpha(), chosen.scale().min(), chosen.scale().max(), globalMean, snapshot.numUsers(),
                snapshot.numItems(), Instant.now(), null, MetricsJson.params(chosen, publish), "{}",
                MetricsJson.counts(counts), null);
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
        return clip(e.getClass().getSimpleName() + ": " + e.getMessage());
    }

    private static String clip(String text) {
        return text.length() <= MAX_REASON_CHARS ? text : text.substring(0, MAX_REASON_CHARS - 1) + "…";
    }

    private static long lap(Map<String, Duration> phases, String name, long since) {
        long now = System.nanoTime();
        phases.put(name, Duration.ofNanos(now - since));
        return now;
    }
}
