package dev.twofold.trainer.publish;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.twofold.db.connect.Database;
import dev.twofold.db.ingest.Importer;
import dev.twofold.db.ingest.RatingScale;
import dev.twofold.db.registry.ModelFactors;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.db.snapshot.SnapshotReader;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.trainer.fit.AlsSolver;
import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.FittedModel;
import dev.twofold.trainer.planted.DemoDataCommand;
import dev.twofold.trainer.sweep.SweepPoint;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.nio.file.Path;
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

    @TempDir
    static Path dir;

    private static Database database;
    private static long firstModel;

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
    void a_worse_model_is_stored_but_not_promoted() throws Exception {
        TrainSettings worse = QUICK.withFit(QUICK.fit().withRank(1).withLambda(50f));
        TrainReport report = new TrainJob(database, worse).run();
        assertEquals(Decision.REJECTED, report.decision());
        ModelRegistry registry = new ModelRegistry(database);
        assertEquals(firstModel, registry.active().orElseThrow().id());
        ModelHeader header = registry.find(report.modelId()).orElseThrow();
        assertEquals("rejected", header.status());
        assertTrue(header.reason().contains("worse than active model " + firstModel), header.reason());
        JsonNode comparison = JSON.readTree(header.metricsJson()).get("comparison");
        assertEquals(firstModel, comparison.get("activeModelId").asLong());
        assertTrue(comparison.get("candidateRmse").asDouble() > comparison.get("activeRmse").asDouble());
    }

    @Test
    @Order(4)
    void without_rank_and_lambda_the_job_sweeps_on_a_validation_split_and_stores_its_choice() throws Exception {
        TrainSettings tuned = QUICK.withFit(QUICK.fit().withCoupling(Coupling.NEIGHBOUR)
                .withTrust(Coupling.NEIGHBOUR.defaultTrustWeight(), 0f)).withPatience(1)
                .withSweep(new int[] {2, 4}, new float[] {0.04f, 0.5f});
        TrainReport report = new TrainJob(database, tuned).run();
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
    @Order(3)
    void a_fit_that_fails_marks_its_version_failed_and_leaves_the_live_model_alone() {
        IllegalStateException e = assertThrows(IllegalStateException.class,
                () -> new TrainJob(database, QUICK, (data, settings, listener) -> {
                    throw new IllegalStateException("solver broke");
                }).run());
        assertEquals("solver broke", e.getMessage());
        ModelRegistry registry = new ModelRegistry(database);
        assertEquals(firstModel, registry.active().orElseThrow().id());
        ModelHeader failed = registry.list().get(0);
        assertEquals("failed", failed.status());
        assertTrue(failed.reason().contains("solver broke"), failed.reason());
    }
}
