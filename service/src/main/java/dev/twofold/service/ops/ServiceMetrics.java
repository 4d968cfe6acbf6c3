package dev.twofold.service.ops;

import com.zaxxer.hikari.metrics.micrometer.MicrometerMetricsTrackerFactory;
import dev.twofold.db.connect.Database;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.service.scoring.ListCache;
import io.micrometer.core.instrument.Counter;
import io.micrometer.core.instrument.FunctionCounter;
import io.micrometer.core.instrument.Gauge;
import io.micrometer.core.instrument.MeterRegistry;
import io.micrometer.core.instrument.Timer;
import io.micrometer.core.instrument.binder.jvm.ClassLoaderMetrics;
import io.micrometer.core.instrument.binder.jvm.JvmCompilationMetrics;
import io.micrometer.core.instrument.binder.jvm.JvmGcMetrics;
import io.micrometer.core.instrument.binder.jvm.JvmHeapPressureMetrics;
import io.micrometer.core.instrument.binder.jvm.JvmInfoMetrics;
import io.micrometer.core.instrument.binder.jvm.JvmMemoryMetrics;
import io.micrometer.core.instrument.binder.jvm.JvmThreadMetrics;
import io.micrometer.core.instrument.binder.system.FileDescriptorMetrics;
import io.micrometer.core.instrument.binder.system.ProcessorMetrics;
import io.micrometer.core.instrument.binder.system.UptimeMetrics;
import io.micrometer.core.instrument.distribution.CountAtBucket;
import io.micrometer.core.instrument.distribution.HistogramSnapshot;
import io.micrometer.prometheusmetrics.PrometheusConfig;
import io.micrometer.prometheusmetrics.PrometheusMeterRegistry;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.concurrent.ConcurrentHashMap;
import java.util.concurrent.CopyOnWriteArrayList;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicReference;
import java.util.function.BooleanSupplier;
import java.util.function.ToDoubleFunction;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Every metric the service exposes, in one Micrometer registry scraped as Prometheus text. Names
 * of Twofold's own series start with {@code twofold_}; the JVM, process and connection-pool series
 * keep the names of their Micrometer and HikariCP binders ({@code jvm_}, {@code process_},
 * {@code system_}, {@code hikaricp_}) so existing dashboards for those work unchanged. The full
 * list, with units and labels, is in {@code docs/observability.md}.
 *
 * <p>The recording methods are called on request threads: each is a map lookup and a few atomic
 * additions, never I/O. Thread-safe.
 */
public final class ServiceMetrics implements AutoCloseable {

    private static final Logger LOG = LoggerFactory.getLogger(ServiceMetrics.class);

    /** The Prometheus text format version 0.0.4, which every Prometheus-compatible scraper reads. */
    public static final String CONTENT_TYPE = "text/plain; version=0.0.4; charset=utf-8";
    /** Latency target of the API; a histogram bucket sits exactly on it so the share over target is exact. */
    public static final Duration LATENCY_TARGET = Duration.ofMillis(10);
    /** Lowest and highest latency the request histogram resolves; outside, only the count and sum are exact. */
    static final Duration LATENCY_FLOOR = Duration.ofNanos(50_000);
    static final Duration LATENCY_CEILING = Duration.ofSeconds(10);
    /** Route label of requests that matched no route (unknown paths never become label values). */
    public static final String UNMATCHED_ROUTE = "unmatched";
    /** Routes whose traffic counts as API traffic on the dashboard. */
    static final String API_PREFIX = "/v1/";

    static final String REQUESTS = "twofold.http.server.requests";
    static final String PROBLEMS = "twofold.http.server.problems";
    static final String RECOMMENDATIONS = "twofold.recommendations";
    static final String FOLD_INS = "twofold.fold.ins";
    static final String SWAPS = "twofold.model.swap";
    static final String AUTH_REFUSALS = "twofold.auth.refusals";
    static final String DATABASE_UP = "twofold.database.up";
    static final String LIST_CACHE = "twofold.list.cache.lookups";
    private static final String LIST_CACHE_DESCRIPTION = "Recommendation requests the kept ranked lists could answer:"
            + " hit (answered from a kept list) or miss (scored, then kept)";

    private final PrometheusMeterRegistry registry = new PrometheusMeterRegistry(PrometheusConfig.DEFAULT);
    private final Clock clock;
    private final Map<RequestKey, Timer> requestTimers = new ConcurrentHashMap<>();
    private final List<ApiSeries> apiSeries = new CopyOnWriteArrayList<>();
    private final Map<ProblemKey, Counter> problems = new ConcurrentHashMap<>();
    private final Map<String, Counter> strategies = new ConcurrentHashMap<>();
    /** Lookups of the kept ranked lists, once {@link #trackListCache} was called. */
    private volatile ListCache.Stats keptLists;
    private final Map<String, Counter> authRefusals = new ConcurrentHashMap<>();
    private final Counter foldIns;
    private final Timer swaps;
    private final AtomicReference<LiveModel> live = new AtomicReference<>();
    private final List<AutoCloseable> binders = new ArrayList<>();
    private boolean poolTracked;

    /** The model answering requests, as the metrics see it. */
    record LiveModel(ModelHeader header, HeldOutFigures figures, Instant installedAt) {

        Instant trainedAt() {
            return header.finishedAt() != null ? header.finishedAt() : header.createdAt();
        }
    }

    private record RequestKey(String method, String route, int status) {
    }

    private record ProblemKey(String type, int status) {
    }

    private record ApiSeries(Timer timer, int status) {
    }

    /** @param clock what model ages are measured against */
    public ServiceMetrics(Clock clock) {
        this.clock = clock;
        foldIns = Counter.builder(FOLD_INS)
                .description("Users folded into the live model after they wrote ratings or trust edges")
                .register(registry);
        swaps = Timer.builder(SWAPS)
                .description("Model swaps: a newly loaded version replacing the one in memory (count), and how long"
                        + " installing it took")
                .register(registry);
        registerModelGauges();
        bindJvmAndProcess();
    }

    // ---- recording -----------------------------------------------------------------------------

    /**
     * One finished HTTP request.
     *
     * @param route       the route template that matched (like {@code /v1/users/{user}/recommendations}),
     *                    or null when none did; never the raw path, which would carry ids
     * @param problemType the RFC 9457 {@code type} of the error response, or null
     */
    public void requestFinished(String method, String route, int status, String problemType, long nanos) {
        String r = route == null ? UNMATCHED_ROUTE : route;
        requestTimers.computeIfAbsent(new RequestKey(method, r, status), this::requestTimer)
                .record(nanos, TimeUnit.NANOSECONDS);
        if (problemType != null) {
            problems.computeIfAbsent(new ProblemKey(problemSlug(problemType), status), this::problemCounter).increment();
        }
    }

    /** A recommendation list was made with this strategy (the {@code strategy} field of the response). */
    public void recommended(String strategy) {
        strategies.computeIfAbsent(strategy, this::strategyCounter).increment();
    }

    /**
     * A {@code /v1} request was refused by the key check, for {@code reason}: {@code missing} (no
     * key), {@code malformed} (not the Bearer scheme), {@code invalid} (unknown or revoked key) or
     * {@code role} (the key's role is too small).
     */
    public void authRefused(String reason) {
        authRefusals.computeIfAbsent(reason, r -> Counter.builder(AUTH_REFUSALS)
                .description("Requests refused by the API key check, by reason: missing, malformed, invalid (unknown"
                        + " or revoked key), role (the key's role is too small)")
                .tag("reason", r)
                .register(registry)).increment();
    }

    /**
     * Adds {@code twofold_database_up}: 1 while the service's database answers, 0 while it is
     * unreachable (writes are refused, serving goes on from memory). Set at most once.
     */
    public void trackDatabase(BooleanSupplier reachable) {
        Gauge.builder(DATABASE_UP, reachable, r -> r.getAsBoolean() ? 1 : 0)
                .description("1 while the service's database answers, 0 while it cannot be reached")
                .strongReference(true)
                .register(registry);
    }

    /**
     * Follows the kept ranked lists ({@code twofold_list_cache_lookups_total}, by {@code outcome}):
     * {@code hit}, answered from a kept list; {@code miss}, scored and then kept. Requests the cache
     * cannot answer (folded-in, erased or unknown users, long lists) count as neither.
     */
    public void trackListCache(ListCache.Stats stats) {
        keptLists = stats;
        FunctionCounter.builder(LIST_CACHE, stats, ListCache.Stats::hits)
                .description(LIST_CACHE_DESCRIPTION)
                .tag("outcome", "hit")
                .register(registry);
        FunctionCounter.builder(LIST_CACHE, stats, ListCache.Stats::misses)
                .description(LIST_CACHE_DESCRIPTION)
                .tag("outcome", "miss")
                .register(registry);
    }

    /** {@code users} users were folded into the live model after a write. */
    public void foldIn(int users) {
        if (users > 0) {
            foldIns.increment(users);
        }
    }

    /**
     * A model now answers requests: its id, age and held-out figures become the live-model
     * gauges. {@code swapNanos} is how long installing it took; the first model of the process
     * is a load, not a swap, and is not counted as one.
     */
    public void modelInstalled(ModelHeader header, long swapNanos) {
        LiveModel previous = live.getAndSet(new LiveModel(header, HeldOutFigures.parse(header.metricsJson()),
                clock.instant()));
        if (previous != null && previous.header().id() != header.id()) {
            swaps.record(swapNanos, TimeUnit.NANOSECONDS);
        }
    }

    /**
     * Adds the connection pool's series ({@code hikaricp_connections_active}, {@code ..._pending},
     * {@code ..._acquire_seconds}, ...) through HikariCP's Micrometer tracker. A pool reports to
     * one registry only: when another service in this process already measures it, this one
     * goes without the pool's series and says so.
     *
     * @return whether this registry now has the pool's series
     */
    public synchronized boolean trackPool(Database database) {
        if (poolTracked) {
            throw new IllegalStateException("a connection pool is already tracked");
        }
        try {
            database.trackPool(new MicrometerMetricsTrackerFactory(registry));
        } catch (IllegalStateException e) {
            LOG.info("the connection pool of {} already reports to another service's metrics; /metrics of this one"
                    + " has no hikaricp series", database.description());
            return false;
        }
        poolTracked = true;
        return true;
    }

    // ---- reading -------------------------------------------------------------------------------

    /** Everything, in the Prometheus text format ({@link #CONTENT_TYPE}). */
    public byte[] scrape() {
        ByteArrayOutputStream out = new ByteArrayOutputStream(64 * 1024);
        try {
            registry.scrape(out, CONTENT_TYPE, null);
        } catch (IOException e) {
            throw new UncheckedIOException("writing the metrics", e);
        }
        return out.toByteArray();
    }

    /** The registry, for meters that live elsewhere (the retrain history). */
    MeterRegistry registry() {
        return registry;
    }

    /** The model answering requests, or null before the first. */
    LiveModel liveModel() {
        return live.get();
    }

    Clock clock() {
        return clock;
    }

    /**
     * Running totals of API traffic ({@code /v1} routes) since start, for the dashboard's
     * sampler: requests by status class, recommendations by strategy, lookups of the kept ranked
     * lists, and the latency histogram summed over every API route.
     */
    TrafficTotals trafficTotals() {
        long requests = 0;
        long clientErrors = 0;
        long serverErrors = 0;
        double[] bounds = null;
        long[] cumulative = null;
        for (ApiSeries series : apiSeries) {
            HistogramSnapshot snapshot = series.timer().takeSnapshot();
            long count = snapshot.count();
            requests += count;
            if (series.status() >= 500) {
                serverErrors += count;
            } else if (series.status() >= 400) {
                clientErrors += count;
            }
            CountAtBucket[] buckets = snapshot.histogramCounts();
            if (bounds == null) {
                bounds = new double[buckets.length];
                cumulative = new long[buckets.length];
                for (int b = 0; b < buckets.length; b++) {
                    bounds[b] = buckets[b].bucket(TimeUnit.SECONDS);
                }
            }
            for (int b = 0; b < buckets.length && b < cumulative.length; b++) {
                cumulative[b] += (long) buckets[b].count();
            }
        }
        Map<String, Long> byStrategy = new LinkedHashMap<>();
        strategies.forEach((name, counter) -> byStrategy.put(name, (long) counter.count()));
        ListCache.Stats kept = keptLists;
        return new TrafficTotals(requests, clientErrors, serverErrors, byStrategy, kept == null ? 0 : kept.hits(),
                kept == null ? 0 : kept.misses(),
                bounds == null ? new double[0] : bounds, cumulative == null ? new long[0] : cumulative);
    }

    @Override
    public synchronized void close() {
        for (AutoCloseable binder : binders) {
            try {
                binder.close();
            } catch (Exception e) {
                // a binder that fails to let go of its JMX listeners leaves nothing to clean up here
            }
        }
        binders.clear();
        registry.close();
    }

    // ---- meters --------------------------------------------------------------------------------

    private Timer requestTimer(RequestKey key) {
        Timer timer = Timer.builder(REQUESTS)
                .description("HTTP requests by method, route template and status: how many and how long they took in"
                        + " the server")
                .tag("method", key.method())
                .tag("route", key.route())
                .tag("status", Integer.toString(key.status()))
                .publishPercentileHistogram()
                .minimumExpectedValue(LATENCY_FLOOR)
                .maximumExpectedValue(LATENCY_CEILING)
                .serviceLevelObjectives(LATENCY_TARGET)
                .register(registry);
        if (key.route().startsWith(API_PREFIX)) {
            apiSeries.add(new ApiSeries(timer, key.status()));
        }
        return timer;
    }

    private Counter problemCounter(ProblemKey key) {
        return Counter.builder(PROBLEMS)
                .description("Error responses (RFC 9457 problems) by problem type and status")
                .tag("type", key.type())
                .tag("status", Integer.toString(key.status()))
                .register(registry);
    }

    private Counter strategyCounter(String strategy) {
        return Counter.builder(RECOMMENDATIONS)
                .description("Recommendation lists served, by how the user was served: model (own factors), trust"
                        + " (built from trusted users), popular (nothing known)")
                .tag("strategy", strategy)
                .register(registry);
    }

    /** {@code tag:twofold.dev,2026:problem:invalid-parameter} becomes {@code invalid-parameter}. */
    static String problemSlug(String type) {
        int colon = type.lastIndexOf(':');
        return type.startsWith("tag:") && colon >= 0 ? type.substring(colon + 1) : type;
    }

    private void registerModelGauges() {
        Gauge.builder("twofold.model.loaded", live, ref -> ref.get() == null ? 0 : 1)
                .description("1 while a model answers requests, else 0")
                .strongReference(true)
                .register(registry);
        gauge("twofold.model.id", null, "Version id of the model answering requests", m -> m.header().id());
        gauge("twofold.model.age", "seconds", "Time since the live model finished training",
                m -> Duration.between(m.trainedAt(), clock.instant()).toMillis() / 1000.0);
        gauge("twofold.model.trained.timestamp", "seconds", "When the live model finished training (Unix time)",
                m -> m.trainedAt().toEpochMilli() / 1000.0);
        gauge("twofold.model.loaded.timestamp", "seconds", "When this process started answering from the live model"
                + " (Unix time)", m -> m.installedAt().toEpochMilli() / 1000.0);
        gauge("twofold.model.items", null, "Items the live model can recommend", m -> m.header().numItems());
        gauge("twofold.model.rank", null, "Factor rank of the live model", m -> m.header().rank());
        for (String segment : List.of("overall", "cold")) {
            boolean all = segment.equals("overall");
            Gauge.builder("twofold.model.heldout.rmse", live, ref -> figure(ref, f -> all ? f.rmse() : f.coldRmse()))
                    .description("Held-out RMSE of the live model (segment cold: users with few training ratings)")
                    .tag("segment", segment)
                    .strongReference(true)
                    .register(registry);
            Gauge.builder("twofold.model.heldout.precision.at.k", live,
                            ref -> figure(ref, f -> all ? f.precision() : f.coldPrecision()))
                    .description("Held-out precision@k of the live model, over all items a user has not rated")
                    .tag("segment", segment)
                    .strongReference(true)
                    .register(registry);
        }
        gauge("twofold.model.heldout.coverage", null, "Share of the catalogue reached by the live model's held-out top-k"
                + " lists", m -> m.figures().coverage());
        gauge("twofold.model.heldout.k", null, "List length k of the live model's precision@k",
                m -> m.figures().k() == 0 ? Double.NaN : m.figures().k());
        for (String baseline : List.of("global_mean", "biases_only", "without_trust")) {
            Gauge.builder("twofold.model.baseline.rmse", live, ref -> figure(ref, f -> switch (baseline) {
                case "global_mean" -> f.globalMeanRmse();
                case "biases_only" -> f.biasesOnlyRmse();
                default -> f.withoutTrustRmse();
            }))
                    .description("Held-out RMSE of the baselines evaluated with the live model")
                    .tag("baseline", baseline)
                    .strongReference(true)
                    .register(registry);
        }
    }

    private void gauge(String name, String unit, String description, ToDoubleFunction<LiveModel> value) {
        Gauge.Builder<AtomicReference<LiveModel>> builder = Gauge.builder(name, live, ref -> {
            LiveModel m = ref.get();
            return m == null ? Double.NaN : value.applyAsDouble(m);
        }).description(description).strongReference(true);
        if (unit != null) {
            builder.baseUnit(unit);
        }
        builder.register(registry);
    }

    private static double figure(AtomicReference<LiveModel> ref, ToDoubleFunction<HeldOutFigures> pick) {
        LiveModel m = ref.get();
        return m == null ? Double.NaN : pick.applyAsDouble(m.figures());
    }

    private void bindJvmAndProcess() {
        new ClassLoaderMetrics().bindTo(registry);
        new JvmMemoryMetrics().bindTo(registry);
        new JvmThreadMetrics().bindTo(registry);
        new JvmInfoMetrics().bindTo(registry);
        new JvmCompilationMetrics().bindTo(registry);
        new ProcessorMetrics().bindTo(registry);
        new UptimeMetrics().bindTo(registry);
        new FileDescriptorMetrics().bindTo(registry);
        JvmGcMetrics gc = new JvmGcMetrics();
        gc.bindTo(registry);
        binders.add(gc);
        JvmHeapPressureMetrics pressure = new JvmHeapPressureMetrics();
        pressure.bindTo(registry);
        binders.add(pressure);
    }
}
