package dev.twofold.service;

import dev.twofold.db.access.ApiKeys;
import dev.twofold.db.access.KeyRole;
import dev.twofold.db.connect.Database;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.service.access.KeyFollower;
import dev.twofold.service.access.KeyRing;
import dev.twofold.service.fresh.Intake;
import dev.twofold.service.fresh.LiveModel;
import dev.twofold.service.fresh.LiveModels;
import dev.twofold.service.http.AccessPolicy;
import dev.twofold.service.http.HttpApi;
import dev.twofold.service.http.HttpWarmUp;
import dev.twofold.service.model.ModelLoader;
import dev.twofold.service.model.ModelSource;
import dev.twofold.service.model.ServingModel;
import dev.twofold.service.scoring.Ranker;
import io.javalin.config.JavalinConfig;
import java.util.List;
import dev.twofold.service.ops.Observability;
import dev.twofold.service.ops.OpsSettings;
import java.time.Clock;
import java.util.Optional;
import java.util.UUID;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.RejectedExecutionException;
import java.util.concurrent.TimeUnit;
import org.eclipse.jetty.util.thread.QueuedThreadPool;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * The running service: the HTTP API, the model it answers from and, with a database, what keeps
 * that model current. The model and the users folded into it since it was loaded are one
 * {@link LiveModel}, replaced in one step ({@link #install}), so every request sees one whole
 * model, the old or the new. Until a model is installed the service is live but not ready:
 * {@code /v1} reads and {@code /health/ready} answer 503.
 *
 * <p>With a database, the service also takes ratings and trust edges (committed, then folded in),
 * erases users, offers the model admin routes, and follows the active model: at {@link #start()}
 * it loads the active model if there is one, then switches whenever a promotion or rollback is
 * announced (PostgreSQL {@code LISTEN}) or found by polling every {@link
 * ServiceSettings#modelPollInterval()}; a user erased by any process is dropped from memory when
 * the erasure is announced, and users who wrote through another service on the same database are
 * folded in here too. With a {@link KeyRing} as its access policy it reads the API keys at start
 * and follows them the same way ({@link KeyFollower}).
 *
 * <p>The database may be down when the service starts or go away while it runs ({@link
 * DatabaseLink}): the service binds and answers anyway, not ready until it has read the keys and
 * loaded a model, retries with exponential backoff, and then catches up by itself. While the
 * database is away, answers from memory (recommendations, predictions, similar items, key checks)
 * go on, and writes are refused with 503 and {@code Retry-After}; nothing is acknowledged before it
 * is committed.
 *
 * <p>Lifecycle: construct, {@link #start()} once, {@link #close()} (safe to call again, and
 * without a start). Closing stops following models, stops accepting connections and lets
 * requests in flight finish for up to {@link ServiceSettings#stopTimeout()}. The database belongs
 * to the caller.
 */
public final class Service implements AutoCloseable {

    private static final Logger LOG = LoggerFactory.getLogger(Service.class);
    private static final long CLOSE_WAIT_MS = 5_000;

    private final ServiceSettings settings;
    private final LiveModels live;
    private final Ranker ranker = new Ranker();
    private final ModelWatcher watcher;
    private final DatabaseNotifications listener;
    private final KeyFollower keys;
    private final DatabaseLink link;
    private final HttpApi http;
    private final ExecutorService refresher = Executors.newSingleThreadExecutor(task -> {
        Thread t = new Thread(task, "twofold-refresh");
        t.setDaemon(true);
        return t;
    });
    private final Observability ops;
    private final boolean ownsOps;
    private final Object lifecycle = new Object();
    private boolean started;
    private boolean closed;
    /** Guarded by lifecycle: whether the model watcher, the listener and the key follower run. */
    private boolean following;

    /** A service without a database that admits every request: models are {@link #install}ed by the caller. */
    public Service(ServiceSettings settings) {
        this(settings, AccessPolicy.OPEN);
    }

    /** A service without a database, with its own operator view: models are {@link #install}ed by the caller. */
    public Service(ServiceSettings settings, AccessPolicy access) {
        this(settings, access, null, null, null);
    }

    /** A service on a database, following its active model, with its own operator view (no retrain history). */
    public Service(ServiceSettings settings, AccessPolicy access, Database database) {
        this(settings, access, database, database == null ? null : new ModelLoader(database), null);
    }

    /**
     * A service without a database whose operator view the caller owns.
     *
     * @param ops the operator's view (metrics, request log, dashboard); the caller closes it after the service
     */
    public Service(ServiceSettings settings, AccessPolicy access, Observability ops) {
        this(settings, access, null, null, ops);
    }

    /**
     * @param access   who may call the {@code /v1} routes; a {@link KeyRing} is kept in step with the
     *                 database's API keys (without a database, the caller fills it)
     * @param database where data is written and models are administered, or null for none; it may
     *                 be unreachable for now ({@link Database#openDeferred})
     * @param models   where the active model is found and loaded, or null to install models by hand
     * @param ops      the operator's view (metrics, request log, dashboard), which the caller closes
     *                 after the service; null for one of the service's own, without retrain history
     */
    public Service(ServiceSettings settings, AccessPolicy access, Database database, ModelSource models,
            Observability ops) {
        this.settings = settings;
        this.ownsOps = ops == null;
        this.ops = ops == null ? new Observability(OpsSettings.defaults(), null, Clock.systemUTC()) : ops;
        this.live = new LiveModels(settings.freshUsers(), settings.listCacheBytes());
        this.live.onInstall((model, swapNanos) -> this.ops.modelInstalled(model.header(), swapNanos));
        this.live.onFoldIn(this.ops.metrics()::foldIn);
        this.ops.metrics().trackListCache(live.listStats());
        this.watcher = models == null ? null : new ModelWatcher(models, live, settings.modelPollInterval());
        KeyRing ring = access instanceof KeyRing r ? r : null;
        if (ring != null) {
            ring.onRefusal(refusal -> this.ops.metrics().authRefused(refusal.label()));
        }
        this.link = database == null ? null : new DatabaseLink(database, this::databaseReachable);
        this.keys = database == null || ring == null ? null
                : new KeyFollower(ring, new ApiKeys(database), settings.modelPollInterval(), link::lost);
        Intake intake = database == null ? null : new Intake(database, live, origin());
        this.listener = database == null ? null : new DatabaseNotifications(database,
                watcher == null ? () -> { } : watcher::checkSoon, live::forget, payload -> refreshLater(intake, payload),
                keys == null ? () -> { } : keys::reloadSoon, link::lost, settings.modelPollInterval());
        RegistryControl control = database == null ? null
                : new RegistryControl(new ModelRegistry(database), watcher == null ? () -> { } : watcher::checkSoon);
        if (link != null) {
            this.ops.metrics().trackDatabase(link::reachable);
        }
        this.http = new HttpApi(live::current, ranker, intake, control, access, link, this.ops.observer(),
                config -> {
                    useHttpThreads(config);
                    this.ops.configure(config);
                }, settings.stopTimeout(), settings.retryAfterSeconds());
    }

    /**
     * With a database, makes a first attempt to reach it: read the API keys and load the active
     * model (a failure is logged; the service then starts not ready and keeps trying in the
     * background, see {@link DatabaseLink}). Then, for {@link ServiceSettings#warmUp()}, sends
     * requests to a throwaway loopback copy of the routes so the JIT compiles them ({@link
     * HttpWarmUp}); then binds {@link ServiceSettings#host()}:{@link ServiceSettings#port()} and
     * starts serving.
     *
     * @return the bound port (the chosen one when the setting is 0)
     * @throws ServiceStartException when the address cannot be bound
     * @throws IllegalStateException when called twice or after {@link #close()}
     */
    public int start() {
        synchronized (lifecycle) {
            if (started || closed) {
                throw new IllegalStateException(closed ? "the service is closed" : "the service is already started");
            }
            started = true;
            if (link != null) {
                link.connect();
            }
            warmUpHttp();
            int port;
            try {
                port = http.start(settings.host(), settings.port());
            } catch (RuntimeException e) {
                throw new ServiceStartException("cannot serve HTTP on " + settings.host() + ":" + settings.port()
                        + " (" + e.getMessage() + "); free the port or set " + ServiceSettings.PORT_VARIABLE + "/"
                        + ServiceSettings.HOST_VARIABLE, e);
            }
            if (ranker.engine().simd()) {
                LOG.info("scoring with {}", ranker.engine().description());
            } else {
                LOG.warn("scoring with {}; ranking is several times slower without the SIMD kernel",
                        ranker.engine().description());
            }
            ops.start();
            return port;
        }
    }

    /**
     * The database answers (at start or after an outage): read the keys (a failure fails the
     * attempt), then load or check the active model; the first time, start following promotions,
     * erasures, writes and key changes.
     */
    private void databaseReachable() {
        if (keys != null) {
            keys.reload();
        }
        synchronized (lifecycle) {
            if (closed) {
                return;
            }
            if (following) {
                if (watcher != null) {
                    watcher.checkSoon();
                }
                return;
            }
            following = true;
            if (watcher != null) {
                watcher.check();
                watcher.start();
            }
            if (listener != null) {
                listener.start();
            }
            if (keys != null) {
                keys.start();
            }
        }
    }

    /** Sends requests to a throwaway copy of the routes first (see {@link HttpWarmUp}); logged, never fatal. */
    private void warmUpHttp() {
        if (settings.warmUp().isZero()) {
            return;
        }
        long start = System.nanoTime();
        try {
            // the warm-up's lookups of kept lists neither count in the metrics nor fill the real lists
            LiveModel now = live.current();
            LiveModel apart = now == null ? null : now.apart();
            long answered = HttpWarmUp.run(() -> apart, ranker, this::useHttpThreads, settings.warmUp(),
                    key -> KeyRing.only(key, "warm-up", KeyRole.READ));
            LOG.info("HTTP path warmed with {} requests to a throwaway loopback server in {} ms", answered,
                    (System.nanoTime() - start) / 1_000_000);
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
        } catch (RuntimeException e) {
            LOG.warn("the HTTP warm-up failed ({}); serving without it", e.toString());
        }
    }

    /** Serves on a fixed pool of {@link ServiceSettings#httpThreads()} threads, the warm-up server too. */
    private void useHttpThreads(JavalinConfig config) {
        QueuedThreadPool pool = new QueuedThreadPool(settings.httpThreads(), settings.httpThreads());
        pool.setName("twofold-http");
        config.jetty.threadPool = pool;
    }

    /** Makes {@code next} the model that answers requests from now on; returns the one it replaced, if any. */
    public Optional<ServingModel> install(ServingModel next) {
        long warmStart = System.nanoTime();
        int warmBatches = ranker.engine().warmUp(next);
        if (warmBatches > 0) {
            LOG.info("scoring path compiled before the first model takes traffic: {} warm-up batches in {} ms",
                    warmBatches, (System.nanoTime() - warmStart) / 1_000_000);
        }
        Optional<ServingModel> previous = live.install(next);
        LOG.info("serving model {} ({} items, rank {})", next.id(), next.numItems(), next.rank());
        return previous;
    }

    /** The model answering requests now, if one is loaded. */
    public Optional<ServingModel> model() {
        return live.model();
    }

    /** The model and the users folded into it, as requests see it now (null before a model). */
    public LiveModel live() {
        return live.current();
    }

    /** Requests being handled right now. */
    public long inFlightRequests() {
        return http.inFlightRequests();
    }

    /** Every HTTP route as {@code "METHOD /path/{param}"}. */
    public List<String> routes() {
        return http.routes();
    }

    /** Folds in, off the listener's thread, the users another service announced as written. */
    private void refreshLater(Intake intake, String payload) {
        List<String> users = intake.announcedByOthers(payload);
        if (!users.isEmpty()) {
            try {
                refresher.execute(() -> intake.refresh(users));
            } catch (RejectedExecutionException e) {
                // closing
            }
        }
    }

    /** This process and service, for telling its own write announcements from others'. */
    private static String origin() {
        return ProcessHandle.current().pid() + "-" + UUID.randomUUID();
    }

    /** Stops gracefully; later calls do nothing. */
    @Override
    public void close() {
        boolean wasStarted;
        synchronized (lifecycle) {
            if (closed) {
                return;
            }
            closed = true;
            wasStarted = started;
        }
        // outside the lock: a reconnect attempt in progress may be waiting for it
        if (link != null) {
            link.close();
        }
        if (listener != null) {
            listener.close();
        }
        if (watcher != null) {
            watcher.close();
        }
        if (keys != null) {
            keys.close();
        }
        refresher.shutdownNow();
        try {
            if (!refresher.awaitTermination(CLOSE_WAIT_MS, TimeUnit.MILLISECONDS)) {
                LOG.warn("folding in announced writes was still running {} ms after stop was asked", CLOSE_WAIT_MS);
            }
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
        }
        if (wasStarted) {
            http.stop(); // graceful: requests in flight are answered, and with them their scoring
        }
        ranker.engine().close();
        if (ownsOps) {
            ops.close();
        }
    }
}
