package dev.twofold.service.http;

import dev.twofold.service.model.ServingModel;
import dev.twofold.service.scoring.Predictor;
import dev.twofold.service.scoring.Ranker;
import dev.twofold.service.scoring.Recommendation;
import io.javalin.Javalin;
import io.javalin.config.JavalinConfig;
import io.javalin.http.Context;
import io.javalin.security.RouteRole;
import java.io.IOException;
import java.io.InputStream;
import java.io.UncheckedIOException;
import java.time.Duration;
import java.util.List;
import java.util.Map;
import java.util.function.Consumer;
import java.util.function.Supplier;
import org.eclipse.jetty.server.handler.GracefulHandler;

/**
 * The HTTP API on Javalin: routes, the access check, limits and problem responses. The model it
 * answers from comes from a supplier on every request (null while none is loaded), so whoever owns
 * the model can swap it without touching the server.
 *
 * <p>Routes (the contract is {@code openapi.yaml}, served at {@code GET /openapi.yaml}):
 * <ul>
 *   <li>{@code GET /v1/users/{user}/recommendations?count=10&exclude=a,b} ({@link Role#READ})</li>
 *   <li>{@code POST /v1/predictions} ({@link Role#READ}: it changes nothing)</li>
 *   <li>{@code GET /health/live}, {@code GET /health/ready}, {@code GET /openapi.yaml} (no role)</li>
 * </ul>
 *
 * <p>Stopping is graceful: Jetty's {@link GracefulHandler} wraps the application, so
 * {@link #stop()} stops accepting connections, lets requests in flight finish for up to the stop
 * timeout, then closes.
 */
public final class HttpApi {

    private static final String OPENAPI_RESOURCE = "openapi.yaml";
    private static final String YAML = "application/yaml";

    private final Supplier<ServingModel> model;
    private final AccessPolicy access;
    private final ServingObserver observer;
    private final Consumer<JavalinConfig> extensions;
    private final Problems problems;
    private final int retryAfterSeconds;
    private final Ranker ranker = new Ranker();
    private final GracefulHandler graceful = new GracefulHandler();
    private final byte[] openApi;
    private final Javalin app;

    /**
     * @param model             the model to answer from, or null from the supplier while none is loaded
     * @param access            who may call the {@code /v1} routes
     * @param stopTimeout       how long {@link #stop()} waits for requests in flight
     * @param retryAfterSeconds Retry-After of "no model loaded yet" problems
     */
    public HttpApi(Supplier<ServingModel> model, AccessPolicy access, Duration stopTimeout, int retryAfterSeconds) {
        this(model, access, ServingObserver.NONE, config -> { }, stopTimeout, retryAfterSeconds);
    }

    /**
     * @param observer   told of every recommendation list
     * @param extensions adds to the server's configuration before it starts (the operator routes,
     *                   request ids and the request log of {@code dev.twofold.service.ops})
     */
    public HttpApi(Supplier<ServingModel> model, AccessPolicy access, ServingObserver observer,
            Consumer<JavalinConfig> extensions, Duration stopTimeout, int retryAfterSeconds) {
        this.model = model;
        this.access = access;
        this.observer = observer;
        this.extensions = extensions;
        this.retryAfterSeconds = retryAfterSeconds;
        this.problems = new Problems(retryAfterSeconds);
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

    private void configure(JavalinConfig config, Duration stopTimeout) {
        config.startup.showJavalinBanner = false;
        config.http.maxRequestSize = Limits.MAX_BODY_BYTES;
        config.http.prefer405over404 = true;
        config.jetty.modifyServer(server -> {
            server.setHandler(graceful);
            server.setStopTimeout(stopTimeout.toMillis());
            server.setErrorHandler(new ProtocolProblems());
        });

        config.routes.beforeMatched(this::admit);
        config.routes.get("/v1/users/{user}/recommendations", this::recommendations, Role.READ);
        config.routes.post("/v1/predictions", this::predictions, Role.READ);
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

    private void recommendations(Context ctx) {
        String user = RequestInput.id("user", ctx.pathParam("user"));
        int count = RequestInput.count(ctx);
        List<String> exclude = RequestInput.idList(ctx, "exclude");
        ServingModel m = requireModel();
        Recommendation rec = ranker.recommend(m, user, count, exclude);
        observer.recommended(rec.strategy(), false);
        JsonOutput.send(ctx, 200, JsonOutput.JSON, json -> {
            json.writeStartObject();
            json.writeStringField("user", user);
            json.writeNumberField("model", m.id());
            json.writeStringField("strategy", rec.strategy().wireName());
            json.writeArrayFieldStart("items");
            int[] items = rec.items();
            float[] scores = rec.scores();
            for (int j = 0; j < items.length; j++) {
                json.writeStartObject();
                json.writeStringField("item", m.itemId(items[j]));
                json.writeNumberField("score", scores[j]);
                json.writeEndObject();
            }
            json.writeEndArray();
            json.writeEndObject();
        });
    }

    private void predictions(Context ctx) {
        PredictionBatch batch = PredictionBatch.parse(RequestInput.jsonBody(ctx));
        ServingModel m = requireModel();
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
                    json.writeNumberField("score", Predictor.predict(m, m.userIndex(userId), item));
                }
                json.writeEndObject();
            }
            json.writeEndArray();
            json.writeEndObject();
        });
    }

    private void live(Context ctx) {
        JsonOutput.send(ctx, 200, JsonOutput.JSON, json -> {
            json.writeStartObject();
            json.writeStringField("status", "live");
            json.writeEndObject();
        });
    }

    private void ready(Context ctx) {
        ServingModel m = requireModel();
        JsonOutput.send(ctx, 200, JsonOutput.JSON, json -> {
            json.writeStartObject();
            json.writeStringField("status", "ready");
            json.writeNumberField("model", m.id());
            json.writeEndObject();
        });
    }

    private ServingModel requireModel() {
        ServingModel m = model.get();
        if (m == null) {
            throw new ProblemException(ProblemType.MODEL_NOT_LOADED, "no model is loaded yet; the service loads the"
                    + " active model as soon as one is promoted (twofold train, twofold models promote)",
                    Map.of("Retry-After", Integer.toString(retryAfterSeconds)));
        }
        return m;
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
