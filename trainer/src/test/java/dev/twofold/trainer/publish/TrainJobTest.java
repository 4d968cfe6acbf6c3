package dev.twofold.trainer.publish;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.twofold.db.connect.Database;
import dev.twofold.db.ingest.Importer;
import dev.twofold.db.ingest.RatingScale;
import dev.twofold.db.progress.Progress;
import dev.twofold.db.registry.ModelFactors;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.db.registry.Retention;
import dev.twofold.db.registry.RetrainLock;
import dev.twofold.db.registry.RetrainLockedException;
import dev.twofold.db.snapshot.SnapshotReader;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.trainer.fit.AlsSolver;
import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.FittedModel;
import dev.twofold.trainer.planted.DemoDataCommand;
import dev.twofold.trainer.sweep.SweepCommand;
import dev.twofold.trainer.sweep.SweepPoint;
import dev.twofold.trainer.sweep.SweepResult;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.nio.file.Path;
import java.util.List;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.MethodOrderer;
import org.junit.jupiter.api.Order;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.TestMethodOrder;
import org.junit.jupiter.api.io.TempDir;
import picocli.CommandLine;

/** The train job against a real PostgreSQL holding a generated cooking community. */
@TestMethodOrder(MethodOrderer.OrderAnnotation.class)
class TrainJobTest {

    private static final ObjectMapper JSON = new ObjectMapper();
    /** A few epochs keep the test quick; the figures only need to be real, not tuned. */
    private static final TrainSettings QUICK = TrainSettings.defaults().withFit(FitSettings.defaults()
            .withCoupling(Coupling.SHARED).withTrust(Coupling.SHARED.defaultTrustWeight(), FitSettings.DEFAULT_TRUST_ALPHA)
            .withEpochs(6)).withPatience(0);
    /** Rank 1 with a huge λ: a model that can only be worse than a tuned one. */
    private static final TrainSettings WORSE = QUICK.withFit(QUICK.fit().withRank(1).withLambda(50f));

    @TempDir
    static Path dir;

    private static Database database;
    private static long firstModel;
    private static long worseLive;
    private static long bestModel;

    @BeforeAll
    static void loadACookingCommunity() {
        StringWriter out = new StringWriter();
        CommandLine demo = new CommandLine(new DemoDataCommand());
        demo.setOut(new PrintWriter(out));
        assertEquals(0, demo.execute("--out", dir.toString(), "--users", "400", "--items", "120", "--seed", "5"));
        database = TestDatabases.fresh();
        new Importer(database, RatingScale.DEFAULT).importFiles(dir.resolve("ratings.csv"), dir.resolve("trust.csv"));
    }

    @AfterAll
    static void close() {
        if (database != null) {
            database.close();
        }
    }

    @Test
    @Order(1)
    void the_first_model_goes_live_with_its_metrics_and_its_factors_read_back_unchanged() throws Exception {
        TrainReport report = new TrainJob(database, QUICK).run();
        firstModel = report.modelId();
        assertEquals(Decision.PROMOTED, report.decision());
        ModelRegistry registry = new ModelRegistry(database);
        ModelHeader header = registry.find(firstModel).orElseThrow();
        assertEquals("active", header.status());
        assertEquals(firstModel, registry.active().orElseThrow().id());
        assertEquals("shared", header.coupling());
        assertEquals(QUICK.fit().rank(), header.rank());

        JsonNode metrics = JSON.readTree(header.metricsJson());
        double rmse = metrics.at("/model/overall/rmse").asDouble();
        double globalMean = metrics.at("/baselines/globalMean/overall/rmse").asDouble();
        assertTrue(rmse > 0 && rmse < globalMean, "model RMSE " + rmse + " vs global mean " + globalMean);
        assertTrue(metrics.at("/model/overall/precision").isNumber());
        assertTrue(metrics.at("/model/cold/rmse").isNumber());
        assertTrue(metrics.at("/baselines/withoutTrust/overall/rmse").isNumber());
        assertTrue(metrics.at("/baselines/mostPopular/overall/precision").isNumber());
        assertTrue(metrics.at("/comparison/activeModelId").isNull());
        assertEquals("promoted", metrics.at("/comparison/decision").asText());
        assertEquals(report.counts().ratings(), JSON.readTree(header.countsJson()).get("ratings").asInt());

        // the same snapshot, split and settings fit the same factors bitwise: compare with what was stored
        HeldOutData data = HeldOutData.of(new SnapshotReader(database).read(), QUICK);
        FittedModel refit = new AlsSolver().fit(data.trainingData(), QUICK.fit());
        ModelFactors stored = registry.loadFactors(firstModel);
        assertEquals(refit.knownUsers(), stored.knownUsers());
        assertEquals(refit.knownItems(), stored.knownItems());
        assertArrayEquals(refit.userFactors(), stored.userFactors());
        assertArrayEquals(refit.userBias(), stored.userBias());
        assertArrayEquals(refit.itemFactors(), stored.itemFactors());
        assertArrayEquals(refit.itemBias(), stored.itemBias());
        assertArrayEquals(data.train().countAtLeast(QUICK.relevance()), stored.itemPopularity());
        assertNotNull(stored.trustFactors());
        assertEquals(refit.globalMean(), header.globalMean());
    }

    @Test
    @Order(2)
    void a_deliberately_worse_candidate_is_rejected_with_its_reason_and_the_live_model_stays() throws Exception {
        TrainReport report = new TrainJob(database, WORSE).run();
        assertEquals(Decision.REJECTED, report.decision());
        assertEquals(firstModel, report.liveModelId());
        assertTrue(report.live().overall().rmse() < report.model().overall().rmse(), "judged side by side on the same rows");
        assertTrue(Double.isFinite(report.live().overall().precision()));
        ModelRegistry registry = new ModelRegistry(database);
        assertEquals(firstModel, registry.active().orElseThrow().id());
        ModelHeader header = registry.find(report.modelId()).orElseThrow();
        assertEquals("rejected", header.status());
        assertTrue(header.reason().startsWith("quality gate failed: held-out RMSE"), header.reason());
        assertTrue(header.reason().contains("is above live model " + firstModel + "'s"), header.reason());
        JsonNode comparison = JSON.readTree(header.metricsJson()).get("comparison");
        assertEquals(firstModel, comparison.get("activeModelId").asLong());
        assertTrue(comparison.get("candidateRmse").asDouble() > comparison.get("activeRmse").asDouble());
        assertEquals("rejected", comparison.get("decision").asText());
        assertTrue(JSON.readTree(header.metricsJson()).at("/live/overall/precision").isNumber());
        assertTrue(report.summary().contains("live " + firstModel + " "), report.summary());
    }

    @Test
    @Order(99)
    void without_rank_and_lambda_the_job_sweeps_on_a_validation_split_and_stores_its_choice() throws Exception {
        TrainSettings tuned = QUICK.withFit(QUICK.fit().withCoupling(Coupling.NEIGHBOUR)
                .withTrust(Coupling.NEIGHBOUR.defaultTrustWeight(), 0f)).withPatience(1)
                .withSweep(new int[] {2, 4}, new float[] {0.04f, 0.5f});
        // kept as a candidate, so the versions the lifecycle tests above count stay as they were
        TrainReport report = new TrainJob(database, tuned, PublishSettings.defaults().withPolicy(PromotionPolicy.NEVER)).run();
        assertNotNull(report.sweep());
        assertEquals(4, report.sweep().points().size());
        SweepPoint best = report.sweep().best();
        assertTrue(report.tuning().contains("no --rank or --lambda given: swept 4 settings"), report.tuning());
        assertTrue(report.summary().contains("tuning: "), report.summary());
        ModelHeader header = new ModelRegistry(database).find(report.modelId()).orElseThrow();
        assertEquals(best.rank(), header.rank());
        assertEquals(best.lambda(), header.lambda());
        assertEquals("neighbour", header.coupling());
        JsonNode metrics = JSON.readTree(header.metricsJson());
        assertEquals(best.bestEpoch(), metrics.at("/tuning/chosen/epochs").asInt());
        assertEquals(best.bestEpoch(), metrics.at("/training/epochs").asInt(), "the model is fitted for the best epoch count");
        assertEquals(4, metrics.at("/tuning/sweep").size());
        assertEquals("als", JSON.readTree(header.paramsJson()).get("solver").asText());
    }

    @Test
    @Order(5)
    void the_sweep_command_sweeps_the_snapshot_on_the_same_validation_split() {
        TrainSettings sweep = QUICK.withPatience(1).withSweep(new int[] {2, 4}, new float[] {0.04f});
        SweepResult result = SweepCommand.run(new SnapshotReader(database).read(), sweep, Progress.silent());
        assertEquals(2, result.points().size());
        HeldOutData data = HeldOutData.of(new SnapshotReader(database).read(), sweep);
        HeldOutData.Validation v = data.validation(sweep);
        assertTrue(v.rows().nnz() > 0 && v.fit().ratings().nnz() + v.rows().nnz() == data.train().nnz(),
                "the validation rows come out of the training rows only");
        assertTrue(result.csv().lines().count() == 3 && result.svg().startsWith("<svg"));
    }

    @Test
    @Order(3)
    void promote_always_overrides_the_gate_and_rollback_returns_to_the_previous_model() {
        TrainReport report = new TrainJob(database, WORSE, PublishSettings.defaults().withPolicy(PromotionPolicy.ALWAYS)).run();
        assertEquals(Decision.PROMOTED, report.decision());
        assertFalse(report.verdict().passes());
        assertTrue(report.reason().startsWith("--promote always; promoted although the quality gate failed"), report.reason());
        ModelRegistry registry = new ModelRegistry(database);
        assertEquals(report.modelId(), registry.active().orElseThrow().id());
        assertEquals(firstModel, registry.rollback());
        assertEquals(firstModel, registry.active().orElseThrow().id());
        assertEquals(report.modelId(), registry.rollback(), "rolling back twice returns to where it started");
        worseLive = report.modelId();
    }

    @Test
    @Order(4)
    void a_better_candidate_passes_the_gate_and_is_promoted() {
        TrainReport report = new TrainJob(database, QUICK).run();
        assertEquals(Decision.PROMOTED, report.decision(), report.reason());
        assertEquals(worseLive, report.liveModelId());
        assertEquals(report.modelId(), report.activeModelId());
        assertTrue(report.reason().startsWith("quality gate passed: held-out RMSE"), report.reason());
        ModelRegistry registry = new ModelRegistry(database);
        assertEquals(report.modelId(), registry.active().orElseThrow().id());
        assertEquals(worseLive, registry.previous().orElseThrow());
        assertEquals("retired", registry.find(worseLive).orElseThrow().status());
        bestModel = report.modelId();
    }

    @Test
    @Order(5)
    void promote_never_keeps_a_candidate_and_leaves_the_live_model() {
        TrainReport report = new TrainJob(database, QUICK, PublishSettings.defaults().withPolicy(PromotionPolicy.NEVER)).run();
        assertEquals(Decision.CANDIDATE, report.decision());
        ModelRegistry registry = new ModelRegistry(database);
        assertEquals(bestModel, registry.active().orElseThrow().id());
        ModelHeader header = registry.find(report.modelId()).orElseThrow();
        assertEquals("candidate", header.status());
        assertTrue(header.reason().startsWith("--promote never: kept as a candidate; the quality gate passed"), header.reason());
    }

    @Test
    @Order(6)
    void a_second_retrain_stops_at_once_while_another_holds_the_lock_and_registers_nothing() {
        ModelRegistry registry = new ModelRegistry(database);
        int versions = registry.list().size();
        try (RetrainLock held = RetrainLock.acquire(database, "twofold train")) {
            TrainJob job = new TrainJob(database, QUICK);
            RetrainLockedException e = assertThrows(RetrainLockedException.class, job::run);
            assertEquals(75, e.exitCode());
            assertTrue(job.modelId().isEmpty());
        }
        assertEquals(versions, registry.list().size());
        assertEquals(bestModel, registry.active().orElseThrow().id());
    }

    @Test
    @Order(7)
    void a_fit_that_fails_marks_its_version_failed_and_leaves_the_live_model_alone() {
        IllegalStateException e = assertThrows(IllegalStateException.class,
                () -> new TrainJob(database, QUICK, (data, settings, listener) -> {
                    throw new IllegalStateException("solver broke");
                }).run());
        assertEquals("solver broke", e.getMessage());
        ModelRegistry registry = new ModelRegistry(database);
        assertEquals(bestModel, registry.active().orElseThrow().id());
        ModelHeader failed = registry.list().get(0);
        assertEquals("failed", failed.status());
        assertTrue(failed.reason().contains("solver broke"), failed.reason());
    }

    @Test
    @Order(8)
    void the_next_run_fails_a_version_its_dead_trainer_left_training_and_retention_trims_old_versions() {
        ModelRegistry registry = new ModelRegistry(database);
        ModelHeader live = registry.active().orElseThrow();
        long orphan = registry.create(live); // what a trainer killed mid-run leaves behind
        int keep = 2;
        TrainReport report = new TrainJob(database, QUICK, PublishSettings.defaults()
                .withPolicy(PromotionPolicy.NEVER).withRetention(new Retention(keep))).run();
        assertEquals(List.of(orphan), report.recovered());
        ModelHeader failed = registry.find(orphan).orElseThrow();
        assertEquals("failed", failed.status());
        assertEquals(ModelRegistry.ORPHAN_REASON, failed.reason());
        assertTrue(report.summary().contains("recovered: model " + orphan), report.summary());

        List<Long> left = registry.list().stream().map(ModelHeader::id).toList();
        long previous = registry.previous().orElseThrow();
        assertEquals(List.of(report.modelId(), orphan, bestModel, previous), left,
                "the 2 newest, the active one and the rollback target");
        assertFalse(report.deleted().isEmpty());
        for (long gone : report.deleted()) {
            assertTrue(registry.find(gone).isEmpty());
        }
    }
}
