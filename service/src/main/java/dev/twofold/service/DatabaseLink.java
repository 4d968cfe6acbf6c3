package dev.twofold.service;

import dev.twofold.db.TwofoldException;
import dev.twofold.db.connect.Database;
import dev.twofold.service.http.DatabaseState;
import java.time.Duration;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.concurrent.Executors;
import java.util.concurrent.RejectedExecutionException;
import java.util.concurrent.ScheduledExecutorService;
import java.util.concurrent.TimeUnit;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * The service's hold on its database: whether it answers, and getting it back when it does not.
 *
 * <p>An attempt {@linkplain Database#probe() probes} the server (a few seconds at most, never the
 * pool's borrow time-out), {@linkplain Database#ensureSchema() applies the schema} on the first
 * success, then runs {@code onReachable} (read the API keys, load or check the active model); if
 * any of that fails the attempt failed. {@link #connect()} makes the first attempt on the caller's
 * thread. While the database is unreachable, attempts repeat on a background thread with
 * exponential backoff: {@link #FIRST_RETRY_MS}, then twice as long each time up to
 * {@link #MAX_RETRY_MS}, each failure logged with the delay to the next.
 *
 * <p>It becomes unreachable when the first attempt fails or when anything using it reports
 * {@link #lost(String)} (a request, the notification listener, the key follower). Meanwhile
 * {@link #reachable()} is false, so writes are refused at once with 503; serving from memory goes
 * on. Thread-safe.
 */
final class DatabaseLink implements DatabaseState, AutoCloseable {

    private static final Logger LOG = LoggerFactory.getLogger(DatabaseLink.class);
    static final long FIRST_RETRY_MS = 250;
    static final long MAX_RETRY_MS = 8_000;
    private static final long CLOSE_WAIT_MS = 5_000;

    private final Database database;
    private final Runnable onReachable;
    private final ScheduledExecutorService retries = Executors.newSingleThreadScheduledExecutor(task -> {
        Thread t = new Thread(task, "twofold-database-link");
        t.setDaemon(true);
        return t;
    });
    private volatile boolean up;
    private volatile Instant downSince;
    /** Guarded by this: whether an attempt is scheduled, how long the next wait is, how many failed in a row. */
    private boolean retrying;
    private long nextDelayMs = FIRST_RETRY_MS;
    private int failedAttempts;
    private boolean closed;

    /** @param onReachable run after every successful probe, before the link counts as up; throws when it cannot finish */
    DatabaseLink(Database database, Runnable onReachable) {
        this.database = database;
        this.onReachable = onReachable;
    }

    /** The first attempt, on the caller's thread; on failure, retrying continues in the background. */
    boolean connect() {
        return attempt();
    }

    @Override
    public boolean reachable() {
        return up;
    }

    @Override
    public String unreachableSince() {
        Instant since = downSince;
        return up || since == null ? "" : "since " + since.truncatedTo(ChronoUnit.SECONDS);
    }

    @Override
    public void lost(String reason) {
        synchronized (this) {
            if (closed || !up) {
                return;
            }
            up = false;
            downSince = Instant.now();
            LOG.warn("lost the database {} ({}); writes are refused with 503 and recommendations are served from"
                    + " memory until it answers again", database.description(), reason);
            scheduleAttempt(FIRST_RETRY_MS);
        }
    }

    /** One attempt; true when the database answered and everything that needed it was done. */
    private boolean attempt() {
        try {
            database.probe();
            database.ensureSchema();
            onReachable.run();
        } catch (TwofoldException e) {
            failed(e.getMessage());
            return false;
        } catch (RuntimeException e) {
            LOG.error("reaching the database failed unexpectedly", e);
            failed(e.toString());
            return false;
        }
        synchronized (this) {
            if (!up) {
                Instant since = downSince;
                LOG.info("the database {} answers{}", database.description(), since == null ? ""
                        : " again after " + Duration.between(since, Instant.now()).toSeconds() + " s and "
                        + failedAttempts + " failed attempts");
            }
            up = true;
            downSince = null;
            failedAttempts = 0;
            nextDelayMs = FIRST_RETRY_MS;
        }
        return true;
    }

    private synchronized void failed(String reason) {
        if (closed) {
            return;
        }
        if (downSince == null) {
            downSince = Instant.now();
        }
        up = false;
        failedAttempts++;
        long delay = nextDelayMs;
        nextDelayMs = Math.min(MAX_RETRY_MS, nextDelayMs * 2);
        LOG.warn("cannot reach the database: {}; attempt {} failed, next in {} ms", reason, failedAttempts, delay);
        scheduleAttempt(delay);
    }

    /** Caller holds this. */
    private void scheduleAttempt(long delayMs) {
        if (retrying || closed) {
            return;
        }
        retrying = true;
        try {
            retries.schedule(() -> {
                synchronized (this) {
                    retrying = false;
                }
                attempt();
            }, delayMs, TimeUnit.MILLISECONDS);
        } catch (RejectedExecutionException e) {
            retrying = false; // closing
        }
    }

    /** Stops retrying; waits a bounded time for an attempt in progress. Safe to call twice. */
    @Override
    public void close() {
        synchronized (this) {
            closed = true;
        }
        retries.shutdownNow();
        try {
            if (!retries.awaitTermination(CLOSE_WAIT_MS, TimeUnit.MILLISECONDS)) {
                LOG.warn("an attempt to reach the database was still running {} ms after stop was asked", CLOSE_WAIT_MS);
            }
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
        }
    }
}
