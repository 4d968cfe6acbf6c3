package dev.twofold.service;

import dev.twofold.db.DatabaseUnavailableException;
import dev.twofold.db.access.ApiKeys;
import dev.twofold.db.connect.Database;
import dev.twofold.db.ingest.RatingWriter;
import dev.twofold.db.internal.SqlFailures;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.service.fresh.Intake;
import java.sql.Connection;
import java.sql.SQLException;
import java.sql.Statement;
import java.time.Duration;
import java.util.Objects;
import java.util.function.Consumer;
import org.postgresql.PGConnection;
import org.postgresql.PGNotification;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Hears what other processes announce as it commits: holds one connection of the pool in
 * {@code LISTEN} on {@value ModelRegistry#NOTIFY_CHANNEL} (the registry sends the new model id on
 * every promotion and rollback), on {@value RatingWriter#ERASURE_CHANNEL} (a user was erased;
 * the payload is their id), on {@value Intake#WRITES_CHANNEL} (users wrote through some
 * service) and on {@value ApiKeys#NOTIFY_CHANNEL} (a key was created or revoked). Promotions call
 * {@code onPromotion} and key changes {@code onKeys} once per batch of notifications, and both
 * once after every (re)connect, since something may have changed while it was not listening;
 * erasures call {@code onErasure} with the id; writes call {@code onWrite} with the payload.
 *
 * <p>If the connection breaks it reports the database {@code lost} (when the failure is one of
 * reaching it) and reconnects every {@code retry}; the watcher's polling covers the gap. Before
 * the connection goes back to the pool it stops listening ({@code UNLISTEN *}), so no other user
 * of the pool collects notifications.
 */
final class DatabaseNotifications implements AutoCloseable {

    private static final Logger LOG = LoggerFactory.getLogger(DatabaseNotifications.class);
    /** Longest a wait for notifications blocks, which bounds how long close() waits. */
    static final int WAIT_MS = 500;
    /** A connection that died without closing (no reset from the peer) is noticed by a query this often. */
    static final long PROBE_INTERVAL_MS = 10_000;

    private final Database database;
    private final Runnable onPromotion;
    private final Consumer<String> onErasure;
    private final Consumer<String> onWrite;
    private final Runnable onKeys;
    private final Consumer<String> lost;
    private final Duration retry;
    private final Thread thread;
    private volatile boolean closed;
    private String lastProblem;

    DatabaseNotifications(Database database, Runnable onPromotion, Consumer<String> onErasure,
            Consumer<String> onWrite, Runnable onKeys, Consumer<String> lost, Duration retry) {
        this.database = database;
        this.onPromotion = onPromotion;
        this.onErasure = onErasure;
        this.onWrite = onWrite;
        this.onKeys = onKeys;
        this.lost = lost;
        this.retry = retry;
        this.thread = new Thread(this::run, "twofold-notifications");
        this.thread.setDaemon(true);
    }

    void start() {
        thread.start();
    }

    private void run() {
        while (!closed) {
            try (Connection c = database.dataSource().getConnection()) {
                try {
                    listen(c);
                } finally {
                    if (!c.isClosed()) {
                        try (Statement s = c.createStatement()) {
                            s.execute("UNLISTEN *");
                        }
                    }
                }
            } catch (SQLException | RuntimeException e) {
                if (closed) {
                    return;
                }
                if (e instanceof DatabaseUnavailableException
                        || e instanceof SQLException sql && SqlFailures.isConnectionFailure(sql)) {
                    lost.accept(e.getMessage());
                }
                String problem = "not listening for promotions, erasures, writes and key changes (" + e.getMessage()
                        + "); retrying every " + retry.toMillis() + " ms, polling meanwhile";
                if (!Objects.equals(problem, lastProblem)) {
                    LOG.warn(problem);
                    lastProblem = problem;
                }
                pause();
            }
        }
    }

    private void listen(Connection c) throws SQLException {
        c.setAutoCommit(true);
        try (Statement s = c.createStatement()) {
            s.execute("LISTEN " + ModelRegistry.NOTIFY_CHANNEL);
            s.execute("LISTEN " + RatingWriter.ERASURE_CHANNEL);
            s.execute("LISTEN " + Intake.WRITES_CHANNEL);
            s.execute("LISTEN " + ApiKeys.NOTIFY_CHANNEL);
        }
        if (lastProblem != null) {
            LOG.info("listening for promotions, erasures, writes and key changes again");
            lastProblem = null;
        }
        PGConnection pg = c.unwrap(PGConnection.class);
        onPromotion.run();
        onKeys.run();
        long probeAt = System.nanoTime() + PROBE_INTERVAL_MS * 1_000_000L;
        while (!closed) {
            if (System.nanoTime() - probeAt > 0) {
                try (Statement s = c.createStatement()) {
                    s.setQueryTimeout((int) Math.max(1, PROBE_INTERVAL_MS / 1000));
                    s.execute("select 1");
                }
                probeAt = System.nanoTime() + PROBE_INTERVAL_MS * 1_000_000L;
            }
            PGNotification[] notes = pg.getNotifications(WAIT_MS);
            if (notes == null) {
                continue;
            }
            boolean promoted = false;
            boolean keys = false;
            for (PGNotification note : notes) {
                if (RatingWriter.ERASURE_CHANNEL.equals(note.getName())) {
                    onErasure.accept(note.getParameter());
                } else if (Intake.WRITES_CHANNEL.equals(note.getName())) {
                    onWrite.accept(note.getParameter());
                } else if (ApiKeys.NOTIFY_CHANNEL.equals(note.getName())) {
                    keys = true;
                } else {
                    promoted = true;
                }
            }
            if (promoted) {
                onPromotion.run();
            }
            if (keys) {
                onKeys.run();
            }
        }
    }

    private void pause() {
        try {
            Thread.sleep(retry.toMillis());
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            closed = true;
        }
    }

    /** Stops listening and returns the connection; waits at most a little over {@value #WAIT_MS} ms. Safe twice. */
    @Override
    public void close() {
        closed = true;
        thread.interrupt();
        try {
            thread.join(WAIT_MS * 4L);
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
        }
    }
}
