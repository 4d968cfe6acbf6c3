package dev.twofold.service;

import dev.twofold.service.model.ServingModel;
import java.time.Duration;
import java.util.Objects;
import java.util.Optional;
import java.util.concurrent.Executors;
import java.util.concurrent.ScheduledExecutorService;
import java.util.concurrent.TimeUnit;
import java.util.function.Supplier;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Gets the service its first model: checks for an active model now and then every interval until
 * one loads, then stops checking. A failed check (database down, a model that cannot be served) is
 * logged once per distinct reason and retried at the next interval; the service stays live and not
 * ready meanwhile.
 *
 * <p>Switching to a newer active model while serving is the hot-swap step that comes later; it
 * extends {@link #check()}.
 */
final class ModelWatcher implements AutoCloseable {

    private static final Logger LOG = LoggerFactory.getLogger(ModelWatcher.class);
    private static final long CLOSE_WAIT_MS = 5_000;

    private final Supplier<Optional<ServingModel>> activeModel;
    private final Service service;
    private final Duration interval;
    private final ScheduledExecutorService timer = Executors.newSingleThreadScheduledExecutor(task -> {
        Thread t = new Thread(task, "twofold-model-watcher");
        t.setDaemon(true);
        return t;
    });
    private String lastProblem;

    /** @param activeModel loads the active model, or gives empty when none is promoted yet */
    ModelWatcher(Supplier<Optional<ServingModel>> activeModel, Service service, Duration interval) {
        this.activeModel = activeModel;
        this.service = service;
        this.interval = interval;
    }

    /** Checks in the background every interval until the service has a model. */
    void start() {
        timer.scheduleWithFixedDelay(() -> {
            if (check()) {
                timer.shutdown();
            }
        }, interval.toMillis(), interval.toMillis(), TimeUnit.MILLISECONDS);
    }

    /** One check; true when the service has a model afterwards. */
    synchronized boolean check() {
        if (service.model().isPresent()) {
            return true;
        }
        try {
            Optional<ServingModel> loaded = activeModel.get();
            if (loaded.isPresent()) {
                service.install(loaded.get());
                return true;
            }
            report("no active model yet; waiting for one to be promoted (checking every " + interval.toMillis()
                    + " ms)");
        } catch (RuntimeException e) {
            report("cannot load the active model: " + e.getMessage() + "; retrying every " + interval.toMillis()
                    + " ms");
        }
        return false;
    }

    private void report(String problem) {
        if (!Objects.equals(problem, lastProblem)) {
            LOG.warn(problem);
            lastProblem = problem;
        }
    }

    /** Stops checking; waits a bounded time for a check in progress. Safe to call twice. */
    @Override
    public void close() {
        timer.shutdownNow();
        try {
            if (!timer.awaitTermination(CLOSE_WAIT_MS, TimeUnit.MILLISECONDS)) {
                LOG.warn("a model load was still running {} ms after stop was asked", CLOSE_WAIT_MS);
            }
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
        }
    }
}
