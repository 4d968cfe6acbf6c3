package dev.twofold.service;

import dev.twofold.db.registry.ModelHeader;
import dev.twofold.service.fresh.LiveModels;
import dev.twofold.service.model.ModelSource;
import dev.twofold.service.model.ServingModel;
import java.time.Duration;
import java.util.Objects;
import java.util.Optional;
import java.util.concurrent.Executors;
import java.util.concurrent.RejectedExecutionException;
import java.util.concurrent.ScheduledExecutorService;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicBoolean;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Keeps the service on the active model: each {@link #check()} reads the active pointer (one row)
 * and, when it names another version than the one served, loads that version beside the one in
 * use and installs it in one step ({@link LiveModels#install}), so requests see the old model or
 * the new, never a mix, and none fails during the switch. Checks run on one thread, so two loads
 * never overlap; they come every interval (polling) and whenever {@link #checkSoon()} is called
 * (a promotion notification, a promotion through this service's API).
 *
 * <p>A failed check (database down, a model that cannot be served) is logged once per distinct
 * reason; the current model keeps serving. A version that fails to load for a reason in the
 * model itself is not retried until the active pointer moves on.
 */
final class ModelWatcher implements AutoCloseable {

    private static final Logger LOG = LoggerFactory.getLogger(ModelWatcher.class);
    private static final long CLOSE_WAIT_MS = 5_000;

    private final ModelSource source;
    private final LiveModels live;
    private final Duration interval;
    private final ScheduledExecutorService timer = Executors.newSingleThreadScheduledExecutor(task -> {
        Thread t = new Thread(task, "twofold-model-watcher");
        t.setDaemon(true);
        return t;
    });
    private final AtomicBoolean checkQueued = new AtomicBoolean();
    private String lastProblem;
    private long unservable = -1;

    ModelWatcher(ModelSource source, LiveModels live, Duration interval) {
        this.source = source;
        this.live = live;
        this.interval = interval;
    }

    /** Checks in the background every interval, until closed. */
    void start() {
        timer.scheduleWithFixedDelay(this::check, interval.toMillis(), interval.toMillis(), TimeUnit.MILLISECONDS);
    }

    /** Asks for a check on the watcher thread as soon as it is free; requests made meanwhile merge into one. */
    void checkSoon() {
        if (checkQueued.compareAndSet(false, true)) {
            try {
                timer.execute(() -> {
                    checkQueued.set(false);
                    check();
                });
            } catch (RejectedExecutionException e) {
                checkQueued.set(false); // closed
            }
        }
    }

    /** One check; true when the service has a model afterwards. */
    synchronized boolean check() {
        Optional<ServingModel> serving = live.model();
        try {
            Optional<ModelHeader> active = source.active();
            if (active.isEmpty()) {
                if (serving.isEmpty()) {
                    report("no active model yet; waiting for one to be promoted (checking every " + interval.toMillis()
                            + " ms)");
                }
                return serving.isPresent();
            }
            long id = active.get().id();
            if (serving.isPresent() && serving.get().id() == id) {
                lastProblem = null;
                return true;
            }
            if (id == unservable) {
                return serving.isPresent();
            }
            long started = System.nanoTime();
            ServingModel next;
            try {
                next = source.load(active.get());
            } catch (IllegalArgumentException e) {
                unservable = id;
                throw e;
            }
            Optional<ServingModel> replaced = live.install(next);
            LOG.info("serving model {} ({} items, rank {}, coupling {}){}; loaded in {} ms", next.id(),
                    next.numItems(), next.rank(), next.foldSettings().coupling(),
                    replaced.map(old -> " instead of model " + old.id()).orElse(""),
                    (System.nanoTime() - started) / 1_000_000);
            lastProblem = null;
            return true;
        } catch (RuntimeException e) {
            report("cannot load the active model: " + e.getMessage() + (serving.isPresent()
                    ? "; still serving model " + serving.get().id() : "") + "; retrying every " + interval.toMillis()
                    + " ms");
            return serving.isPresent();
        }
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
