package dev.twofold.service.ops;

import static org.junit.jupiter.api.Assertions.assertEquals;

import dev.twofold.db.connect.Database;
import dev.twofold.db.ingest.Importer;
import dev.twofold.db.ingest.RatingScale;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.service.Service;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.http.AccessPolicy;
import dev.twofold.service.model.ModelLoader;
import dev.twofold.service.testing.ApiClient;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.planted.DemoDataCommand;
import dev.twofold.trainer.publish.Decision;
import dev.twofold.trainer.publish.TrainJob;
import dev.twofold.trainer.publish.TrainReport;
import dev.twofold.trainer.publish.TrainSettings;
import java.io.IOException;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Clock;
import java.time.Duration;
import java.util.ArrayList;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Set;
import picocli.CommandLine;

/**
 * A served cooking community with a real retrain history, for the operator-view tests: generated
 * ratings and follows imported into a fresh PostgreSQL, then four retrains with the real train
 * job, the service following the live model:
 * <ol>
 *   <li>a first model, promoted and loaded;</li>
 *   <li>a worse one (rank 1, heavy regularisation), rejected by the quality gate;</li>
 *   <li>a better-trained one, promoted and swapped in;</li>
 *   <li>a retrain whose fit breaks, recorded as failed.</li>
 * </ol>
 */
final class TrainedCommunity implements AutoCloseable {

    static final int COOKS = 300;
    static final int RECIPES = 90;
    static final long SEED = 7;
    /** Fixed epochs (no early stopping), so the versions differ only as set here. */
    static final TrainSettings FIRST = TrainSettings.defaults().withPatience(0)
            .withFit(FitSettings.defaults().withEpochs(6));
    static final TrainSettings WORSE = FIRST.withFit(FIRST.fit().withRank(1).withLambda(50f));
    static final TrainSettings BETTER = FIRST.withFit(FIRST.fit().withEpochs(14));
    /** Longest wait for the background readings; the tests never assert on elapsed time. */
    static final Duration WAIT = Duration.ofSeconds(30);

    final Database database;
    final Observability ops;
    final Service service;
    final ApiClient api;
    final long firstModel;
    final long rejectedModel;
    final long liveModel;
    final long failedModel;
    final List<String> cooks;

    private TrainedCommunity(Database database, Observability ops, Service service, ApiClient api, long[] models,
            List<String> cooks) {
        this.database = database;
        this.ops = ops;
        this.service = service;
        this.api = api;
        this.firstModel = models[0];
        this.rejectedModel = models[1];
        this.liveModel = models[2];
        this.failedModel = models[3];
        this.cooks = cooks;
    }

    static TrainedCommunity start(Path dir, OpsSettings settings) {
        CommandLine demo = new CommandLine(new DemoDataCommand());
        demo.setOut(new PrintWriter(new StringWriter()));
        assertEquals(0, demo.execute("--out", dir.toString(), "--users", Integer.toString(COOKS), "--items",
                Integer.toString(RECIPES), "--seed", Long.toString(SEED)));
        Database database = TestDatabases.fresh();
        Observability ops = null;
        Service service = null;
        try {
            new Importer(database, RatingScale.DEFAULT).importFiles(dir.resolve("ratings.csv"), dir.resolve("trust.csv"));
            ModelLoader loader = new ModelLoader(database);
            long[] models = new long[4];

            TrainReport first = new TrainJob(database, FIRST).run();
            assertEquals(Decision.PROMOTED, first.decision(), first.summary());
            models[0] = first.modelId();

            ops = new Observability(settings, database, Clock.systemUTC());
            service = new Service(new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(10), Duration.ofSeconds(1)),
                    AccessPolicy.OPEN, ops);
            ApiClient api = new ApiClient(service.start());
            service.install(loader.loadActive().orElseThrow());

            TrainReport worse = new TrainJob(database, WORSE).run();
            assertEquals(Decision.REJECTED, worse.decision(), worse.summary());
            models[1] = worse.modelId();

            TrainReport better = new TrainJob(database, BETTER).run();
            assertEquals(Decision.PROMOTED, better.decision(), better.summary());
            models[2] = better.modelId();
            service.install(loader.loadActive().orElseThrow());

            try {
                new TrainJob(database, FIRST, (data, fit, listener) -> {
                    throw new IllegalStateException("the solver broke (on purpose, for the history)");
                }).run();
                throw new AssertionError("the broken retrain did not fail");
            } catch (IllegalStateException expected) {
                // recorded as failed
            }
            ModelHeader broken = new ModelRegistry(database).list().get(0);
            assertEquals(ModelRegistry.FAILED, broken.status(), "the broken retrain left no failed version");
            models[3] = broken.id();
            return new TrainedCommunity(database, ops, service, api, models, cooksOf(dir.resolve("ratings.csv")));
        } catch (RuntimeException | AssertionError e) {
            if (service != null) {
                service.close();
            }
            if (ops != null) {
                ops.close();
            }
            database.close();
            throw e;
        }
    }

    /**
     * Real API traffic: recommendations for known cooks (strategy model) and unknown ones
     * (popular), predictions, two invalid requests (400) and an unknown path (404).
     */
    Traffic sendTraffic(int knownCooks) {
        int model = 0;
        for (String cook : cooks.subList(0, knownCooks)) {
            assertEquals(200, api.get("/v1/users/" + cook + "/recommendations?count=5").statusCode());
            model++;
        }
        int popular = 0;
        for (int j = 0; j < 3; j++) {
            assertEquals(200, api.get("/v1/users/newcomer-" + j + "/recommendations").statusCode());
            popular++;
        }
        String pair = "{\"pairs\": [{\"user\": \"" + cooks.get(0) + "\", \"item\": \"no-such-recipe\"}]}";
        assertEquals(200, api.postJson("/v1/predictions", pair).statusCode());
        assertEquals(400, api.get("/v1/users/" + cooks.get(0) + "/recommendations?count=0").statusCode());
        assertEquals(400, api.get("/v1/users/" + cooks.get(0) + "/recommendations?count=lots").statusCode());
        assertEquals(404, api.get("/v1/no/such/route/" + cooks.get(1)).statusCode());
        return new Traffic(model, popular, 1, 2, 1);
    }

    /** What {@link #sendTraffic} sent. */
    record Traffic(int modelRecommendations, int popularRecommendations, int predictions, int badRequests,
            int notFound) {

        int recommendationRequests() {
            return modelRecommendations + popularRecommendations + badRequests;
        }
    }

    private static List<String> cooksOf(Path ratings) {
        try {
            Set<String> out = new LinkedHashSet<>();
            for (String line : Files.readAllLines(ratings).subList(1, Files.readAllLines(ratings).size())) {
                out.add(line.substring(0, line.indexOf(',')));
            }
            return new ArrayList<>(out);
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        }
    }

    @Override
    public void close() {
        try {
            service.close();
        } finally {
            try {
                ops.close();
            } finally {
                database.close();
            }
        }
    }
}
