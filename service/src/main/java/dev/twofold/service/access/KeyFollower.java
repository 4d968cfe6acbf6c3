package dev.twofold.service.access;

import dev.twofold.db.DatabaseUnavailableException;
import dev.twofold.db.TwofoldException;
import dev.twofold.db.access.ApiKeys;
import java.time.Duration;
import java.time.Instant;
import java.util.Map;
import java.util.Objects;
import java.util.concurrent.Executors;
import java.util.concurrent.RejectedExecutionException;
import java.util.concurrent.ScheduledExecutorService;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.function.Consumer;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Keeps a {@link KeyRing} in step with the key store: re-reads the live keys whenever asked
 * ({@link #reloadSoon()}, on the {@value ApiKeys#NOTIFY_CHANNEL} notification sent when a key is
 * created or revoked) and every poll interval in case a notification was missed, so a revoked key
 * stops working within seconds; and records when keys were last used, in one statement for all
 * keys every {@link #FLUSH_INTERVAL_MS} and at {@link #close()}.
 *
 * <p>While the database cannot be reached the ring keeps the keys it has, so requests are still
 * checked from memory; uses not recorded are kept for the next batch. Failures are logged once per
 * distinct reason and, when the database is unreachable, reported to {@code lost}.
 */
public final class KeyFollower implements AutoCloseable {

    private static final Logger LOG = LoggerFactory.getLogger(KeyFollower.class);
    /** How often last-used times are written: the {@code keys list} column is at most this late. */
    public static final long FLUSH_INTERVAL_MS = 30_000;
    private static final long CLOSE_WAIT_MS = 5_000;

    private final KeyRing ring;
    private final ApiKeys store;
    private final Duration pollInterval;
    private final Consumer<String> lost;
    private final ScheduledExecutorService timer = Executors.newSingleThreadScheduledExecutor(task -> {
        Thread t = new Thread(task, "twofold-keys");
        t.setDaemon(true);
        return t;
    });
    private final AtomicBoolean reloadQueued = new AtomicBoolean();
    private final Object lifecycle = new Object();
    private boolean started;
    private boolean closed;
    private String lastProblem;

    /**
     * @param pollInterval how often the keys are re-read without a notification
     * @param lost         told when the database could not be reached, with the reason
     */
    public KeyFollower(KeyRing ring, ApiKeys store, Duration pollInterval, Consumer<String> lost) {
        this.ring = ring;
        this.store = store;
        this.pollInterval = pollInterval;
        this.lost = lost;
    }

    /**
     * Reads the live keys into the ring now, on the caller's thread.
     *
     * @throws TwofoldException when they cannot be read; the ring keeps what it had
     */
    public synchronized void reload() {
        int before = ring.size();
        boolean first = !ring.loaded();
        ring.replace(store.live());
        if (first) {
            LOG.info("checking API keys: {} live", ring.size());
        } else if (ring.size() != before) {
            LOG.info("API keys re-read: {} live (was {})", ring.size(), before);
        }
    }

    /** Asks for a reload on the follower's thread as soon as it is free; requests made meanwhile merge into one. */
    public void reloadSoon() {
        if (reloadQueued.compareAndSet(false, true)) {
            try {
                timer.execute(() -> {
                    reloadQueued.set(false);
                    reloadLogged();
                });
            } catch (RejectedExecutionException e) {
                reloadQueued.set(false); // closed
            }
        }
    }

    /** Starts polling and recording uses in the background. Once. */
    public void start() {
        synchronized (lifecycle) {
            if (started || closed) {
                return;
            }
            started = true;
            long poll = pollInterval.toMillis();
            timer.scheduleWithFixedDelay(this::reloadLogged, poll, poll, TimeUnit.MILLISECONDS);
            timer.scheduleWithFixedDelay(this::recordUses, FLUSH_INTERVAL_MS, FLUSH_INTERVAL_MS, TimeUnit.MILLISECONDS);
        }
    }

    private void reloadLogged() {
        try {
            reload();
            if (lastProblem != null) {
                LOG.info("reading the API keys works again ({} live)", ring.size());
                lastProblem = null;
            }
        } catch (TwofoldException e) {
            failed("cannot re-read the API keys (" + e.getMessage() + "); requests are checked against the "
                    + ring.size() + " keys read before", e);
        }
    }

    /** Writes the uses collected since the last batch; on failure they wait for the next one. */
    void recordUses() {
        Map<Long, Instant> uses = ring.takeUses();
        if (uses.isEmpty()) {
            return;
        }
        try {
            store.recordUse(uses);
        } catch (TwofoldException e) {
            ring.notRecorded(uses);
            failed("cannot record when " + uses.size() + " API keys were last used (" + e.getMessage()
                    + "); trying again with the next batch", e);
        }
    }

    private void failed(String problem, TwofoldException e) {
        if (e instanceof DatabaseUnavailableException) {
            lost.accept(e.getMessage());
        }
        if (!Objects.equals(problem, lastProblem)) {
            LOG.warn(problem);
            lastProblem = problem;
        }
    }

    /** Stops following; records the uses not yet recorded (a bounded wait). Safe to call twice. */
    @Override
    public void close() {
        synchronized (lifecycle) {
            if (closed) {
                return;
            }
            closed = true;
        }
        try {
            timer.execute(this::recordUses);
        } catch (RejectedExecutionException e) {
            // already shut down
        }
        timer.shutdown();
        try {
            if (!timer.awaitTermination(CLOSE_WAIT_MS, TimeUnit.MILLISECONDS)) {
                timer.shutdownNow();
                LOG.warn("recording API key use was still running {} ms after stop was asked", CLOSE_WAIT_MS);
            }
        } catch (InterruptedException e) {
            timer.shutdownNow();
            Thread.currentThread().interrupt();
        }
    }
}
