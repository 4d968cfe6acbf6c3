package dev.twofold.service.ops;

import static org.junit.jupiter.api.Assertions.assertEquals;

import dev.twofold.db.access.ApiKeys;
import dev.twofold.db.access.KeyRole;
import dev.twofold.db.connect.Database;
import dev.twofold.db.ingest.Importer;
import dev.twofold.db.ingest.RatingScale;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.service.Service;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.access.KeyRing;
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
import java.net.http.HttpResponse;
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
 * job, the service following the live model as a running service does (it loads the active model
 * at start and switches when a promotion is announced):
 * <ol>
 *   <li>a first model, promoted and loaded;</li>
 *   <li>a worse one (rank 1, heavy regularisation), rejected by the quality gate;</li>
 *   <li>a better-trained one, promoted and swapped in by the service itself;</li>
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
    final List<String> recipes;
    private int followers;

    private TrainedCommunity(Database database, Observability ops, Service service, ApiClient api, long[] models,
            List<String> cooks, List<String> recipes) {
        this.database = database;
        this.ops = ops;
        this.service = service;
        this.api = api;
        this.firstModel = models[0];
        this.rejectedModel = models[1];
        this.liveModel = models[2];
        this.failedModel = models[3];
        this.cooks = cooks;
        this.recipes = recipes;
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
            long[] models = new long[4];

            TrainReport first = new TrainJob(database, FIRST).run();
            assertEquals(Decision.PROMOTED, first.decision(), first.summary());
            models[0] = first.modelId();

            // the service loads the active model as it starts and follows promotions from then on
            ops = new Observability(settings, database, Clock.systemUTC());
            String key = new ApiKeys(database).create("kitchen-backend", KeyRole.WRITE).key();
            ServiceSettings serving = new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(10), Duration.ofSeconds(1));
            service = new Service(serving, new KeyRing(serving.retryAfterSeconds()), database,
                    new ModelLoader(database), ops);
            ApiClient api = new ApiClient(service.start(), key);
            awaitServing(service, models[0]);

            TrainReport worse = new TrainJob(database, WORSE).run();
            assertEquals(Decision.REJECTED, worse.decision(), worse.summary());
            models[1] = worse.modelId();

            TrainReport better = new TrainJob(database, BETTER).run();
            assertEquals(Decision.PROMOTED, better.decision(), better.summary());
            models[2] = better.modelId();
            awaitServing(service, models[2]);

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
            return new TrainedCommunity(database, ops, service, api, models, column(dir.resolve("ratings.csv"), 0),
                    column(dir.resolve("ratings.csv"), 1));
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

    /** Waits until the service answers from {@code model} (it follows promotions by notification and polling). */
    private static void awaitServing(Service service, long model) {
        long deadline = System.nanoTime() + WAIT.toNanos();
        while (service.model().map(m -> m.id() != model).orElse(true)) {
            if (System.nanoTime() > deadline) {
                throw new AssertionError("the service did not switch to model " + model + " within " + WAIT
                        + "; it serves " + service.model().map(m -> Long.toString(m.id())).orElse("nothing"));
            }
            try {
                Thread.sleep(20);
            } catch (InterruptedException e) {
                Thread.currentThread().interrupt();
                throw new AssertionError(e);
            }
        }
    }

    /**
     * Real API traffic: recommendations for known cooks (strategy model; the last one asked twice, so
     * the second answer comes from the list kept for them) and unknown ones
     * (popular), predictions, two invalid requests (400), an unknown path (404), a rating written
     * (202, folded in), a new cook who only follows others (served by trust), and two requests the
     * key check refuses (401: no key, a key never issued).
     */
    Traffic sendTraffic(int knownCooks) {
        int model = 0;
        for (String cook : cooks.subList(0, knownCooks)) {
            assertEquals(200, api.get("/v1/users/" + cook + "/recommendations?count=5").statusCode());
            model++;
        }
        // the last of them again: answered from the list kept for them the first time
        assertEquals(200, api.get("/v1/users/" + cooks.get(knownCooks - 1) + "/recommendations?count=5").statusCode());
        model++;
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
        HttpResponse<String> wrote = api.postJson("/v1/ratings", "[{\"user\": \"" + cooks.get(2) + "\", \"item\": \""
                + recipes.get(recipes.size() - 1) + "\", \"rating\": 4}]");
        assertEquals(202, wrote.statusCode(), wrote.body());
        int folded = ApiClient.json(wrote).path("foldedUsers").asInt();

        // a cook who rated nothing but follows two others is served from the cooks they trust
        String follower = "follower-" + (++followers);
        HttpResponse<String> follows = api.postJson("/v1/trust", "[{\"truster\": \"" + follower + "\", \"trustee\": \""
                + cooks.get(0) + "\"}, {\"truster\": \"" + follower + "\", \"trustee\": \"" + cooks.get(1) + "\"}]");
        assertEquals(202, follows.statusCode(), follows.body());
        folded += ApiClient.json(follows).path("foldedUsers").asInt();
        HttpResponse<String> trusted = api.get("/v1/users/" + follower + "/recommendations?count=5");
        assertEquals("trust", ApiClient.json(trusted).path("strategy").asText(), trusted.body());
        assertEquals(401, api.withKey(null).get("/v1/users/" + cooks.get(0) + "/recommendations").statusCode());
        assertEquals(401, api.withKey("tf_never-issued").get("/v1/users/" + cooks.get(0) + "/recommendations")
                .statusCode());
        return new Traffic(model, popular, 1, 1, 2, 1, folded, 1, 1, 1, knownCooks);
    }

    /** What {@link #sendTraffic} sent, and how many users the service folded in after the write. */
    record Traffic(int modelRecommendations, int popularRecommendations, int trustRecommendations, int predictions,
            int badRequests, int notFound, int foldedUsers, int withoutKey, int withUnknownKey, int keptListHits,
            int keptListMisses) {

        int servedRecommendations() {
            return modelRecommendations + popularRecommendations + trustRecommendations;
        }
    }

    /** The ids in one column of the ratings file, in order of first appearance. */
    private static List<String> column(Path ratings, int index) {
        try {
            List<String> lines = Files.readAllLines(ratings);
            Set<String> out = new LinkedHashSet<>();
            for (String line : lines.subList(1, lines.size())) {
                out.add(line.split(",")[index]);
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
