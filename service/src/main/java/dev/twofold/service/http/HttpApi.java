package dev.twofold.service.http;

import com.fasterxml.jackson.core.JsonGenerator;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.registry.ModelStateException;
import dev.twofold.db.registry.UnknownModelException;
import dev.twofold.service.fresh.Accepted;
import dev.twofold.service.fresh.Intake;
import dev.twofold.service.fresh.LiveModel;
import dev.twofold.service.model.ServingModel;
import dev.twofold.service.scoring.Predictor;
import dev.twofold.service.scoring.Ranked;
import dev.twofold.service.scoring.Ranker;
import dev.twofold.service.scoring.Recommendation;
import io.javalin.Javalin;
import io.javalin.config.JavalinConfig;
import io.javalin.http.Context;
import io.javalin.router.ParsedEndpoint;
import io.javalin.security.RouteRole;
import java.io.IOException;
import java.io.InputStream;
import java.io.UncheckedIOException;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import java.util.concurrent.CompletableFuture;
import java.util.function.Consumer;
import java.util.function.Function;
import java.util.function.Supplier;
import org.eclipse.jetty.server.handler.GracefulHandler;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.slf4j.MDC;

/**
 * The HTTP API on Javalin: routes, the access check, limits and problem responses. What it answers
 * from comes from a supplier on every request (null while no model is loaded), so whoever owns the
 * model can swap it without touching the server; a request reads it once and uses that one model
 * throughout.
 *
 * <p>Routes (the contract is {@code openapi.yaml}, served at {@code GET /openapi.yaml}):
 * <ul>
 *   <li>{@code GET /v1/users/{user}/recommendations?count=10&exclude=a,b} ({@link Role#READ})</li>
 *   <li>{@code POST /v1/predictions} ({@link Role#READ}: it changes nothing)</li>
 *   <li>{@code GET /v1/items/{item}/similar?count=10} ({@link Role#READ})</li>
 *   <li>{@code POST /v1/ratings}, {@code POST /v1/trust} ({@link Role#WRITE}; 202 once committed)</li>
 *   <li>{@code GET /v1/models}, {@code GET /v1/models/{id}}, {@code POST /v1/models/{id}/promote},
 *       {@code POST /v1/models/rollback}, {@code DELETE /v1/users/{user}} ({@link Role#ADMIN})</li>
 *   <li>{@code GET /health/live}, {@code GET /health/ready}, {@code GET /openapi.yaml} (no role)</li>
 * </ul>
 * Without a database (no {@link Intake}, no {@link ModelControl}) the write, erasure and model routes
 * answer 503; with one that is unreachable ({@link DatabaseState}) they answer 503 at once, while
 * the routes that answer from memory go on.
 *
 * <p>Stopping is graceful: Jetty's {@link GracefulHandler} wraps the application, so
 * {@link #stop()} stops accepting connections, lets requests in flight finish for up to the stop
 * timeout, then closes.
 */
public final class HttpApi {

    private static final String OPENAPI_RESOURCE = "openapi.yaml";
    private static final String YAML = "application/yaml";
    private static final String ROLLBACK = "rollback";
    /**
     * Largest body (recommendations, similar items) a scoring thread writes itself. A write that fits the response
     * buffer's aggregation size (set to at least twice this) only copies into the buffer, and the
     * connection flushes it without the writer waiting; count = 10 makes about 600 bytes.
     */
    static final int INLINE_BODY_BYTES = 4096;
    private static final CompletableFuture<Void> DONE = CompletableFuture.completedFuture(null);
    /** Same logger as the erasure's own audit line in the database layer. */
    private static final Logger AUDIT = LoggerFactory.getLogger("dev.twofold.audit");

    private final Supplier<LiveModel> live;
    private final Ranker ranker;
    private final Intake intake;
    private final ModelControl models;
    private final AccessPolicy access;
    private final DatabaseState database;
    private final ServingObserver observer;
    private final Consumer<JavalinConfig> extensions;
    private final Problems problems;
    private final int retryAfterSeconds;
    private final GracefulHandler graceful = new GracefulHandler();
    private final byte[] openApi;
    private final Javalin app;

    /**
     * @param live              what to answer from, or null from the supplier while no model is loaded
     * @param ranker            ranks and finds similar items
     * @param intake            takes ratings and trust edges, or null without a database
     * @param models            the model registry, or null without a database
     * @param access            who may call the {@code /v1} routes
     * @param database          whether the database of {@code intake} and {@code models} answers, or null without one
     * @param observer          told of every request and recommendation
     * @param stopTimeout       how long {@link #stop()} waits for requests in flight
     * @param retryAfterSeconds Retry-After of "try again later" problems
     */
    public HttpApi(Supplier<LiveModel> live, Ranker ranker, Intake intake, ModelControl models, AccessPolicy access,
            DatabaseState database, ServingObserver observer, Duration stopTimeout, int retryAfterSeconds) {
        this(live, ranker, intake, models, access, database, observer, config -> { }, stopTimeout, retryAfterSeconds);
    }

    /**
     * @param extensions adds to the server's configuration before it starts (the operator routes,
     *                   request ids and the request log of {@code dev.twofold.service.ops})
     */
    public HttpApi(Supplier<LiveModel> live, Ranker ranker, Intake intake, ModelControl models, AccessPolicy access,
            DatabaseState database, ServingObserver observer, Consumer<JavalinConfig> extensions, Duration stopTimeout,
            int retryAfterSeconds) {
        this.live = live;
        this.ranker = ranker;
        this.intake = intake;
        this.models = models;
        this.access = access;
        this.database = database;
        this.observer = observer;
        this.extensions = extensions;
        this.retryAfterSeconds = retryAfterSeconds;
        this.problems = new Problems(retryAfterSeconds, database == null ? reason -> { } : database::lost);
        this.openApi = readOpenApi();
        this.app = Javalin.create(config -> configure(config, stopTimeout));
    }

    /** Binds and starts serving; returns the bound port (useful with port 0). */
    public int start(String host, int port) {
        app.start(host, port);
        return app.port();
    }

    /** Stops gracefully (see the class comment). */
    public void stop() {
        app.stop();
    }

    /** Requests being handled right now. */
    public long inFlightRequests() {
        return graceful.getCurrentRequestCount();
    }

    /** Every route as {@code "METHOD /path/{param}"}, for checking the contract. */
    public List<String> routes() {
        List<String> out = new ArrayList<>();
        for (ParsedEndpoint e : app.unsafe.internalRouter.allHttpHandlers()) {
            out.add(e.endpoint.method.name() + " " + e.endpoint.path);
        }
        return out;
    }

    private void configure(JavalinConfig config, Duration stopTimeout) {
        config.startup.showJavalinBanner = false;
        config.jetty.modifyHttpConfiguration(http -> http.setOutputAggregationSize(
                Math.max(http.getOutputAggregationSize(), 2 * INLINE_BODY_BYTES)));
        config.http.maxRequestSize = Limits.MAX_BODY_BYTES;
        config.http.prefer405over404 = true;
        config.jetty.modifyServer(server -> {
            server.setHandler(graceful);
            server.setStopTimeout(stopTimeout.toMillis());
            server.setErrorHandler(new ProtocolProblems());
        });
        if (observer != ServingObserver.NONE) {
            config.requestLogger.http((ctx, millis) -> observer.requestFinished(ctx.method().name(),
                    ctx.endpoint() == null ? ctx.path() : ctx.endpoint().path, ctx.statusCode(), millis));
        }

        config.routes.beforeMatched(this::admit);
        config.routes.get("/v1/users/{user}/recommendations", this::recommendations, Role.READ);
        config.routes.post("/v1/predictions", this::predictions, Role.READ);
        config.routes.get("/v1/items/{item}/similar", this::similar, Role.READ);
        config.routes.post("/v1/ratings", this::ratings, Role.WRITE);
        config.routes.post("/v1/trust", this::trust, Role.WRITE);
        config.routes.get("/v1/models", this::listModels, Role.ADMIN);
        config.routes.get("/v1/models/{id}", this::showModel, Role.ADMIN);
        config.routes.post("/v1/models/{id}/promote", this::promote, Role.ADMIN);
        config.routes.post("/v1/models/" + ROLLBACK, this::rollback, Role.ADMIN);
        config.routes.delete("/v1/users/{user}", this::forgetUser, Role.ADMIN);
        config.routes.get("/health/live", this::live);
        config.routes.get("/health/ready", this::ready);
        config.routes.get("/openapi.yaml", ctx -> ctx.contentType(YAML).result(openApi));
        extensions.accept(config);
        problems.register(config.routes);
    }

    private void admit(Context ctx) {
        for (RouteRole role : ctx.routeRoles()) {
            access.admit(ctx, (Role) role);
        }
    }

    /**
     * Answers from the user's kept list when there is one ({@link LiveModel#recommendLater}), else
     * scores the user's items on the engine's scoring threads and answers from there ({@link #answerLater}).
     */
    private void recommendations(Context ctx) {
        String user = RequestInput.id("user", ctx.pathParam("user"));
        int count = RequestInput.count(ctx);
        List<String> exclude = RequestInput.idList(ctx, "exclude");
        LiveModel now = requireLive();
        ServingModel m = now.model();
        answerLater(ctx, now.recommendLater(ranker, user, count, exclude), rec -> {
            if (observer != ServingObserver.NONE) {
                observer.recommended(rec.strategy(), now.fresh().get(user) != null);
            }
            return JsonOutput.bytes(json -> {
                json.writeStartObject();
                json.writeStringField("user", user);
                json.writeNumberField("model", m.id());
                json.writeStringField("strategy", rec.strategy().wireName());
                writeItems(json, m, rec.items(), rec.scores());
                json.writeEndObject();
            });
        });
    }

    /** Scores the item's neighbours on the engine's scoring threads and answers from there ({@link #answerLater}). */
    private void similar(Context ctx) {
        String itemId = RequestInput.id("item", ctx.pathParam("item"));
        int count = RequestInput.count(ctx);
        ServingModel m = requireLive().model();
        int item = m.itemIndex(itemId);
        if (item < 0) {
            throw new ProblemException(ProblemType.NOT_FOUND, "item '" + RequestInput.shorten(itemId)
                    + "' is not in model " + m.id() + " (it had no ratings when the model was trained)");
        }
        answerLater(ctx, ranker.similarLater(m, item, count, List.of()), similar -> JsonOutput.bytes(json -> {
            json.writeStartObject();
            json.writeStringField("item", itemId);
            json.writeNumberField("model", m.id());
            writeItems(json, m, similar.items(), similar.scores());
            json.writeEndObject();
        }));
    }

    /**
     * Answers 200 with the JSON body {@code body} makes of {@code scored}'s result, without holding
     * an HTTP thread while the scoring threads work: the body is made on the scoring thread that
     * completes {@code scored} and written there when it fits the response buffer ({@link
     * #INLINE_BODY_BYTES}); a larger body is written from an HTTP thread, so a client that reads
     * slowly can never hold up the scoring of other requests. The request's logging context goes
     * with it.
     */
    private <T> void answerLater(Context ctx, CompletableFuture<T> scored, Function<T, byte[]> body) {
        Map<String, String> logContext = MDC.getCopyOfContextMap();
        CompletableFuture<Void> answered = scored.thenCompose(result -> {
            restore(logContext);
            byte[] bytes = body.apply(result);
            ctx.status(200).contentType(JsonOutput.JSON);
            if (bytes.length <= INLINE_BODY_BYTES) {
                JsonOutput.write(ctx, bytes);
                return DONE;
            }
            return CompletableFuture.runAsync(() -> {
                restore(logContext);
                JsonOutput.write(ctx, bytes);
            }, app.jettyServer().server().getThreadPool());
        });
        ctx.future(() -> answered);
        if (!answered.isDone() && logContext != null) {
            logContext.keySet().forEach(MDC::remove); // the request goes on on another thread
        }
    }

    /** Gives the current thread the logging context of the request it now works on. */
    private static void restore(Map<String, String> logContext) {
        if (logContext != null) {
            MDC.setContextMap(logContext);
        }
    }

    private static void writeItems(JsonGenerator json, ServingModel m, int[] items, float[] scores) throws IOException {
        json.writeArrayFieldStart("items");
        for (int j = 0; j < items.length; j++) {
            json.writeStartObject();
            json.writeStringField("item", m.itemId(items[j]));
            json.writeNumberField("score", scores[j]);
            json.writeEndObject();
        }
        json.writeEndArray();
    }

    private void predictions(Context ctx) {
        PredictionBatch batch = PredictionBatch.parse(RequestInput.jsonBody(ctx));
        LiveModel now = requireLive();
        ServingModel m = now.model();
        String notInModel = "' is not in model " + m.id() + " (it had no ratings when the model was trained)";
        JsonOutput.send(ctx, 200, JsonOutput.JSON, json -> {
            json.writeStartObject();
            json.writeNumberField("model", m.id());
            json.writeArrayFieldStart("predictions");
            for (int j = 0; j < batch.size(); j++) {
                String userId = batch.users()[j];
                String itemId = batch.items()[j];
                int item = m.itemIndex(itemId);
                json.writeStartObject();
                json.writeStringField("user", userId);
                json.writeStringField("item", itemId);
                if (item < 0) {
                    json.writeNullField("score");
                    json.writeStringField("reason", "item '" + itemId + notInModel);
                } else {
                    json.writeNumberField("score", Predictor.predict(m, now.user(userId), item));
                }
                json.writeEndObject();
            }
            json.writeEndArray();
            json.writeEndObject();
        });
    }

    private void ratings(Context ctx) {
        Intake in = requireIntake();
        Accepted accepted = in.ratings(WriteBatch.ratings(RequestInput.jsonBody(ctx), in.scale()));
        sendAccepted(ctx, accepted);
    }

    private void trust(Context ctx) {
        Intake in = requireIntake();
        Accepted accepted = in.trust(WriteBatch.trust(RequestInput.jsonBody(ctx)));
        sendAccepted(ctx, accepted);
    }

    private static void sendAccepted(Context ctx, Accepted accepted) {
        JsonOutput.send(ctx, 202, JsonOutput.JSON, json -> {
            json.writeStartObject();
            json.writeNumberField("received", accepted.report().received());
            json.writeNumberField("written", accepted.report().written());
            json.writeNumberField("newUsers", accepted.report().newUsers());
            json.writeNumberField("newItems", accepted.report().newItems());
            json.writeNumberField("foldedUsers", accepted.foldedUsers());
            json.writeEndObject();
        });
    }

    /** 204 once the erasure is committed; 404 when nothing is stored under the id (so a repeated DELETE is 404). */
    private void forgetUser(Context ctx) {
        String user = RequestInput.id("user", ctx.pathParam("user"));
        Intake in = requireIntake();
        boolean erased = in.forget(user);
        String key = ctx.attribute(AccessPolicy.CALLER_ATTRIBUTE);
        AUDIT.info("erasure of user '{}' asked through the API{}: {}", user, key == null ? "" : " with key '" + key + "'",
                erased ? "erased" : "nothing stored under this id");
        if (!erased) {
            throw new ProblemException(ProblemType.NOT_FOUND, "no user has the id '" + RequestInput.shorten(user)
                    + "'; nothing is stored under it, so nothing was erased");
        }
        ctx.status(204);
    }

    private void listModels(Context ctx) {
        ModelControl control = requireModels();
        List<ModelHeader> all = control.list();
        ModelControl.Pointer pointer = control.pointer();
        JsonOutput.send(ctx, 200, JsonOutput.JSON, json -> {
            json.writeStartObject();
            writePointer(json, pointer);
            json.writeArrayFieldStart("models");
            for (ModelHeader h : all) {
                writeModel(json, h);
            }
            json.writeEndArray();
            json.writeEndObject();
        });
    }

    private void showModel(Context ctx) {
        if (ROLLBACK.equals(ctx.pathParam("id"))) {
            // /v1/models/rollback is an action, not a version: only POST is defined there
            throw new ProblemException(ProblemType.METHOD_NOT_ALLOWED, ctx.method() + " is not allowed on "
                    + ctx.path() + "; POST it to roll back", Map.of("Allow", "POST"));
        }
        long id = modelId(ctx);
        ModelHeader h = requireModels().find(id).orElseThrow(() -> noSuchModel(id));
        JsonOutput.send(ctx, 200, JsonOutput.JSON, json -> writeModel(json, h));
    }

    private void promote(Context ctx) {
        long id = modelId(ctx);
        ModelControl control = requireModels();
        ModelControl.Pointer pointer;
        try {
            pointer = control.promote(id);
        } catch (UnknownModelException e) {
            throw noSuchModel(id);
        } catch (ModelStateException e) {
            throw new ProblemException(ProblemType.MODEL_STATE, e.getMessage());
        }
        sendPointer(ctx, pointer);
    }

    private void rollback(Context ctx) {
        ModelControl.Pointer pointer;
        try {
            pointer = requireModels().rollback();
        } catch (ModelStateException e) {
            throw new ProblemException(ProblemType.MODEL_STATE, e.getMessage());
        }
        sendPointer(ctx, pointer);
    }

    private void sendPointer(Context ctx, ModelControl.Pointer pointer) {
        JsonOutput.send(ctx, 200, JsonOutput.JSON, json -> {
            json.writeStartObject();
            writePointer(json, pointer);
            json.writeEndObject();
        });
    }

    /** {@code active}, {@code previous} (the registry) and {@code serving} (this process, right now). */
    private void writePointer(JsonGenerator json, ModelControl.Pointer pointer) throws IOException {
        writeOptionalId(json, "active", pointer.active());
        writeOptionalId(json, "previous", pointer.previous());
        LiveModel now = live.get();
        writeOptionalId(json, "serving", now == null ? Optional.empty() : Optional.of(now.model().id()));
    }

    private static void writeOptionalId(JsonGenerator json, String field, Optional<Long> id) throws IOException {
        if (id.isPresent()) {
            json.writeNumberField(field, id.get());
        } else {
            json.writeNullField(field);
        }
    }

    private static void writeModel(JsonGenerator json, ModelHeader h) throws IOException {
        json.writeStartObject();
        json.writeNumberField("id", h.id());
        json.writeStringField("status", h.status());
        json.writeNumberField("rank", h.rank());
        json.writeStringField("coupling", h.coupling());
        json.writeNumberField("lambda", h.lambda());
        json.writeNumberField("trustWeight", h.trustWeight());
        json.writeNumberField("trustAlpha", h.trustAlpha());
        json.writeNumberField("scaleMin", h.scaleMin());
        json.writeNumberField("scaleMax", h.scaleMax());
        json.writeNumberField("globalMean", h.globalMean());
        json.writeNumberField("users", h.numUsers());
        json.writeNumberField("items", h.numItems());
        json.writeStringField("createdAt", h.createdAt().toString());
        if (h.finishedAt() == null) {
            json.writeNullField("finishedAt");
        } else {
            json.writeStringField("finishedAt", h.finishedAt().toString());
        }
        // jsonb columns read back as text: already valid JSON objects
        json.writeFieldName("params");
        json.writeRawValue(jsonOrEmpty(h.paramsJson()));
        json.writeFieldName("metrics");
        json.writeRawValue(jsonOrEmpty(h.metricsJson()));
        json.writeFieldName("counts");
        json.writeRawValue(jsonOrEmpty(h.countsJson()));
        if (h.reason() == null) {
            json.writeNullField("reason");
        } else {
            json.writeStringField("reason", h.reason());
        }
        json.writeEndObject();
    }

    private static String jsonOrEmpty(String json) {
        return json == null || json.isBlank() ? "{}" : json;
    }

    private static long modelId(Context ctx) {
        String raw = ctx.pathParam("id");
        try {
            long id = Long.parseLong(raw);
            if (id > 0) {
                return id;
            }
        } catch (NumberFormatException e) {
            // reported below
        }
        throw new ProblemException(ProblemType.INVALID_PARAMETER, "model id must be a positive integer; got '"
                + RequestInput.shorten(raw) + "'");
    }

    private static ProblemException noSuchModel(long id) {
        return new ProblemException(ProblemType.NOT_FOUND, "there is no model " + id
                + "; GET /v1/models lists the versions");
    }

    private void live(Context ctx) {
        JsonOutput.send(ctx, 200, JsonOutput.JSON, json -> {
            json.writeStartObject();
            json.writeStringField("status", "live");
            json.writeEndObject();
        });
    }

    private void ready(Context ctx) {
        ServingModel m = requireLive().model();
        if (!access.ready()) {
            throw new ProblemException(ProblemType.DATABASE_UNAVAILABLE, "model " + m.id() + " is loaded but the API"
                    + " keys have not been read from the database yet, so no /v1 request can be checked",
                    Map.of("Retry-After", Integer.toString(retryAfterSeconds)));
        }
        JsonOutput.send(ctx, 200, JsonOutput.JSON, json -> {
            json.writeStartObject();
            json.writeStringField("status", "ready");
            json.writeNumberField("model", m.id());
            json.writeEndObject();
        });
    }

    private LiveModel requireLive() {
        LiveModel now = live.get();
        if (now == null) {
            throw new ProblemException(ProblemType.MODEL_NOT_LOADED, "no model is loaded yet; the service loads the"
                    + " active model as soon as one is promoted (twofold train, twofold models promote)",
                    Map.of("Retry-After", Integer.toString(retryAfterSeconds)));
        }
        return now;
    }

    private Intake requireIntake() {
        if (intake == null) {
            throw noDatabase();
        }
        requireReachable();
        return intake;
    }

    private ModelControl requireModels() {
        if (models == null) {
            throw noDatabase();
        }
        requireReachable();
        return models;
    }

    /** Refuses at once while the database is known to be unreachable: nothing is tried, so nothing is written. */
    private void requireReachable() {
        if (database != null && !database.reachable()) {
            throw new ProblemException(ProblemType.DATABASE_UNAVAILABLE, "the database cannot be reached ("
                    + database.unreachableSince() + "); nothing was written. The service reconnects by itself and"
                    + " serves recommendations from memory meanwhile; try again later",
                    Map.of("Retry-After", Integer.toString(retryAfterSeconds)));
        }
    }

    private ProblemException noDatabase() {
        return new ProblemException(ProblemType.DATABASE_UNAVAILABLE, "this service runs without a database, so it"
                + " cannot store data or change models; start it with twofold serve",
                Map.of("Retry-After", Integer.toString(retryAfterSeconds)));
    }

    private static byte[] readOpenApi() {
        try (InputStream in = HttpApi.class.getResourceAsStream(OPENAPI_RESOURCE)) {
            if (in == null) {
                throw new IllegalStateException(OPENAPI_RESOURCE + " is missing from the service jar next to "
                        + HttpApi.class.getName() + "; the build copies it from the repository root");
            }
            return in.readAllBytes();
        } catch (IOException e) {
            throw new UncheckedIOException("reading " + OPENAPI_RESOURCE + " from the service jar", e);
        }
    }
}
