package dev.twofold.service.ops;

import dev.twofold.db.connect.Database;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.service.http.AccessPolicy;
import dev.twofold.service.http.ProblemType;
import dev.twofold.service.http.ServingObserver;
import dev.twofold.service.scoring.Strategy;
import io.javalin.config.JavalinConfig;
import io.javalin.http.Context;
import io.javalin.router.Endpoint;
import java.time.Clock;
import java.util.concurrent.Executors;
import java.util.concurrent.RejectedExecutionException;
import java.util.concurrent.ScheduledExecutorService;
import java.util.concurrent.TimeUnit;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * The operator's view of one service process: its metrics, request log, retrain history and
 * dashboard, and the one place they are wired into the HTTP server.
 *
 * <p>Use: construct, hand {@link #configure} to the Javalin configuration of the API (it adds a
 * request-id step before every request, the request line and metrics after it, and the routes
 * {@code GET /metrics}, {@code GET /dashboard}, {@code GET /dashboard/data} and the dashboard's
 * assets), tell it of every model swap ({@link #modelInstalled}), {@link #start()} the background
 * readings, {@link #close()} (safe twice).
 *
 * <p>With a database it also reports the connection pool and reads the model registry for the
 * retrain history; without one those parts stay empty.
 */
public final class Observability implements AutoCloseable {

    private static final Logger LOG = LoggerFactory.getLogger(Observability.class);
    private static final long CLOSE_WAIT_MS = 5_000;
    static final String ID_ATTRIBUTE = "twofold.request.id";

    private final OpsSettings settings;
    private final ServiceMetrics metrics;
    private final RetrainHistory history;
    private final TrafficHistory traffic;
    private final RequestLog requestLog = new RequestLog();
    private final Dashboard dashboard;
    private final ScheduledExecutorService timer = Executors.newSingleThreadScheduledExecutor(task -> {
        Thread t = new Thread(task, "twofold-ops");
        t.setDaemon(true);
        return t;
    });
    private final Object lifecycle = new Object();
    private boolean started;
    private boolean closed;

    /**
     * @param database the service's database: its pool is measured and its model registry read; null for none
     */
    public Observability(OpsSettings settings, Database database, Clock clock) {
        this.settings = settings;
        this.metrics = new ServiceMetrics(clock);
        this.traffic = new TrafficHistory(settings.trafficSamples());
        if (database != null) {
            metrics.trackPool(database);
            this.history = new RetrainHistory(new ModelRegistry(database), metrics.registry(), clock);
        } else {
            this.history = null;
        }
        this.dashboard = new Dashboard(settings, metrics, traffic, history);
    }

    /** Where request threads and the serving core report what they did. */
    public ServiceMetrics metrics() {
        return metrics;
    }

    /** What the HTTP API tells of each recommendation list it makes. */
    public ServingObserver observer() {
        return new ServingObserver() {
            @Override
            public void recommended(Strategy strategy, boolean folded) {
                metrics.recommended(strategy.wireName());
            }
        };
    }

    /** Adds the request-id step, the request line and metrics, and the operator routes to the API's configuration. */
    public void configure(JavalinConfig config) {
        config.routes.before(this::beginRequest);
        config.requestLogger.http(this::finishRequest);
        config.routes.get("/metrics", ctx -> ctx.contentType(ServiceMetrics.CONTENT_TYPE)
                .result(history == null ? metrics.scrape() : history.consistent(metrics::scrape)));
        dashboard.register(config.routes);
    }

    /**
     * A model now answers requests (see {@link ServiceMetrics#modelInstalled}); the retrain history
     * is read again soon, since a swap usually follows a retrain.
     */
    public void modelInstalled(ModelHeader header, long swapNanos) {
        metrics.modelInstalled(header, swapNanos);
        if (history != null) {
            submit(history::refresh);
        }
    }

    /** Starts sampling traffic and reading the retrain history in the background. Once. */
    public void start() {
        synchronized (lifecycle) {
            if (started || closed) {
                throw new IllegalStateException(closed ? "closed" : "already started");
            }
            started = true;
            long trafficMs = settings.trafficInterval().toMillis();
            timer.scheduleWithFixedDelay(this::sampleTraffic, 0, trafficMs, TimeUnit.MILLISECONDS);
            if (history != null) {
                long historyMs = settings.historyRefresh().toMillis();
                timer.scheduleWithFixedDelay(history::refresh, 0, historyMs, TimeUnit.MILLISECONDS);
            }
        }
    }

    /** Stops the background readings (a bounded wait for one in progress) and releases the metric binders. */
    @Override
    public void close() {
        synchronized (lifecycle) {
            if (closed) {
                return;
            }
            closed = true;
        }
        timer.shutdownNow();
        try {
            if (!timer.awaitTermination(CLOSE_WAIT_MS, TimeUnit.MILLISECONDS)) {
                LOG.warn("a metrics reading was still running {} ms after stop was asked", CLOSE_WAIT_MS);
            }
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
        }
        metrics.close();
    }

    private void sampleTraffic() {
        try {
            traffic.record(metrics.clock().instant(), metrics.trafficTotals());
        } catch (RuntimeException e) {
            LOG.warn("sampling API traffic for the dashboard failed", e);
        }
    }

    private void submit(Runnable task) {
        try {
            timer.execute(task);
        } catch (RejectedExecutionException e) {
            // closed: nothing more to read
        }
    }

    private void beginRequest(Context ctx) {
        String id = RequestLog.idFor(ctx.header(RequestLog.HEADER));
        ctx.attribute(ID_ATTRIBUTE, id);
        ctx.header(RequestLog.HEADER, id);
        requestLog.begin(id);
    }

    private void finishRequest(Context ctx, Float millis) {
        Endpoint matched = ctx.endpoints().matchedHttpEndpoint();
        String route = matched == null ? null : matched.path;
        String problem = ctx.attribute(ProblemType.REQUEST_ATTRIBUTE);
        String method = ctx.method().name();
        int status = ctx.statusCode();
        float ms = millis == null ? 0f : millis;
        metrics.requestFinished(method, route, status, problem, (long) (ms * 1_000_000.0));
        String id = ctx.attribute(ID_ATTRIBUTE);
        requestLog.finish(id == null ? RequestLog.newId() : id, method, ctx.path(), route, status, ms, problem,
                ctx.attribute(AccessPolicy.CALLER_ATTRIBUTE));
    }
}
