package dev.twofold.service;

import dev.twofold.service.http.AccessPolicy;
import dev.twofold.service.http.HttpApi;
import dev.twofold.service.model.ServingModel;
import dev.twofold.service.ops.Observability;
import dev.twofold.service.ops.OpsSettings;
import java.time.Clock;
import java.util.Optional;
import java.util.concurrent.atomic.AtomicReference;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * The running service: the HTTP API and the model it answers from. The model sits in an
 * {@link AtomicReference}; {@link #install} replaces it in one step, so every request sees one
 * whole model, the old or the new. Until a model is installed the service is live but not ready:
 * {@code /v1} reads and {@code /health/ready} answer 503.
 *
 * <p>Lifecycle: construct, {@link #start()} once, {@link #close()} (safe to call again, and
 * without a start). Closing stops accepting connections and lets requests in flight finish for up
 * to {@link ServiceSettings#stopTimeout()}.
 */
public final class Service implements AutoCloseable {

    private static final Logger LOG = LoggerFactory.getLogger(Service.class);

    private final ServiceSettings settings;
    private final AtomicReference<ServingModel> model = new AtomicReference<>();
    private final HttpApi http;
    private final Observability ops;
    private final boolean ownsOps;
    private final Object lifecycle = new Object();
    private boolean started;
    private boolean closed;

    /** A service that admits every request (no API keys yet). */
    public Service(ServiceSettings settings) {
        this(settings, AccessPolicy.OPEN);
    }

    /** A service with its own operator view (metrics, request log, dashboard) and no retrain history. */
    public Service(ServiceSettings settings, AccessPolicy access) {
        this(settings, access, new Observability(OpsSettings.defaults(), null, Clock.systemUTC()), true);
    }

    /**
     * @param ops the operator's view (metrics, request log, dashboard); it belongs to the caller,
     *            who closes it after the service
     */
    public Service(ServiceSettings settings, AccessPolicy access, Observability ops) {
        this(settings, access, ops, false);
    }

    private Service(ServiceSettings settings, AccessPolicy access, Observability ops, boolean ownsOps) {
        this.settings = settings;
        this.ops = ops;
        this.ownsOps = ownsOps;
        this.http = new HttpApi(model::get, access, ops.observer(), ops::configure, settings.stopTimeout(),
                settings.retryAfterSeconds());
    }

    /**
     * Binds {@link ServiceSettings#host()}:{@link ServiceSettings#port()} and starts serving.
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
            int port;
            try {
                port = http.start(settings.host(), settings.port());
            } catch (RuntimeException e) {
                throw new ServiceStartException("cannot serve HTTP on " + settings.host() + ":" + settings.port()
                        + " (" + e.getMessage() + "); free the port or set " + ServiceSettings.PORT_VARIABLE + "/"
                        + ServiceSettings.HOST_VARIABLE, e);
            }
            ops.start();
            return port;
        }
    }

    /** Makes {@code next} the model that answers requests from now on; returns the one it replaced, if any. */
    public Optional<ServingModel> install(ServingModel next) {
        if (next == null) {
            throw new IllegalArgumentException("model must not be null");
        }
        long swapStarted = System.nanoTime();
        ServingModel previous = model.getAndSet(next);
        ops.modelInstalled(next.header(), System.nanoTime() - swapStarted);
        LOG.info("serving model {} ({} items, rank {})", next.id(), next.numItems(), next.rank());
        return Optional.ofNullable(previous);
    }

    /** The model answering requests now, if one is loaded. */
    public Optional<ServingModel> model() {
        return Optional.ofNullable(model.get());
    }

    /** Requests being handled right now. */
    public long inFlightRequests() {
        return http.inFlightRequests();
    }

    /** Stops serving gracefully; later calls do nothing. */
    @Override
    public void close() {
        synchronized (lifecycle) {
            if (closed) {
                return;
            }
            closed = true;
            if (started) {
                http.stop();
            }
            if (ownsOps) {
                ops.close();
            }
        }
    }
}
