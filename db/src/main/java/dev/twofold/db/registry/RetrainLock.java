package dev.twofold.db.registry;

import com.zaxxer.hikari.HikariDataSource;
import dev.twofold.db.DatabaseFailureException;
import dev.twofold.db.DatabaseUnavailableException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.internal.SqlFailures;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.PreparedStatement;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Statement;
import java.time.Instant;
import java.time.OffsetDateTime;
import java.util.Locale;

/**
 * The retrain lock: at most one retrain runs against a database at a time.
 *
 * <p>It is a session-level PostgreSQL advisory lock ({@code pg_try_advisory_lock(}{@value #KEY}{@code )})
 * taken on a connection that is set aside from the pool for the whole run. PostgreSQL drops it when
 * that session ends, however the trainer ends — an exception, SIGTERM or kill -9 (the kernel closes
 * the socket and the server ends the session) — so a dead trainer never blocks the next one.
 * Advisory locks are per database: trainers of different Twofold databases on one server do not meet.
 *
 * <p>A second trainer does not wait: {@link #acquire} fails at once with a
 * {@link RetrainLockedException} (exit 75) that names the holder from the {@code retrain_holder} row
 * the holder wrote, checked against {@code pg_locks} (a row left by a dead trainer is never believed),
 * else from {@code pg_stat_activity}, where the lock session's {@code application_name} reads
 * {@code twofold train PID@HOST}.
 *
 * <p>{@link #close()} releases the lock by closing the set-aside connection for good (it never goes
 * back to the pool with a lock on it). Safe to call twice.
 */
public final class RetrainLock implements AutoCloseable {

    /** The advisory lock key: "twofol!" in ASCII; classid 0x74776f66, objid 0x6f6c6421 in {@code pg_locks}. */
    public static final long KEY = 0x7477_6f66_6f6c_6421L;
    /** PostgreSQL truncates {@code application_name} to 63 bytes. */
    static final int MAX_APPLICATION_NAME = 63;

    private static final String HELD_BY_KEY = "l.locktype = 'advisory' and l.granted and l.objsubid = 1"
            + " and l.classid = " + (KEY >>> 32) + " and l.objid = " + (KEY & 0xffff_ffffL)
            + " and l.database = (select oid from pg_database where datname = current_database())";

    private final Database database;
    private final Connection connection;
    private final Holder holder;
    private boolean closed;

    private RetrainLock(Database database, Connection connection, Holder holder) {
        this.database = database;
        this.connection = connection;
        this.holder = holder;
    }

    /**
     * Who holds (or held) the lock.
     *
     * @param host            the trainer's host name, or null when only PostgreSQL's view is known
     * @param processId       the trainer's process id, or 0 when unknown
     * @param command         what it runs, or null
     * @param since           when it took the lock (or, when unknown, when its session started)
     * @param backendPid      the PostgreSQL session holding it
     * @param applicationName that session's application name
     * @param clientAddress   that session's client address, or null (local socket or not visible)
     */
    public record Holder(String host, long processId, String command, Instant since, int backendPid,
            String applicationName, String clientAddress) {

        /** "twofold train on host h (process 123), holding it since 2026-12-01T02:00:00Z, PostgreSQL session 4567". */
        public String describe() {
            StringBuilder s = new StringBuilder();
            if (host != null) {
                s.append(command).append(" on host ").append(host).append(" (process ").append(processId).append(')');
            } else {
                s.append("PostgreSQL session application '").append(applicationName).append('\'');
                if (clientAddress != null) {
                    s.append(" from ").append(clientAddress);
                }
            }
            if (since != null) {
                s.append(host != null ? ", holding it since " : ", connected since ").append(since);
            }
            s.append(", PostgreSQL session ").append(backendPid);
            return s.toString();
        }
    }

    /**
     * Takes the lock or fails at once.
     *
     * @param command what the holder runs, shown to whoever finds the lock taken (e.g. {@code twofold train})
     * @throws RetrainLockedException when another session holds it
     * @throws DatabaseUnavailableException when the database cannot be reached
     */
    public static RetrainLock acquire(Database database, String command) {
        String host = hostName();
        long pid = ProcessHandle.current().pid();
        Connection c = null;
        try {
            c = database.dataSource().getConnection();
            c.setAutoCommit(true);
            try (PreparedStatement ps = c.prepareStatement("select set_config('application_name', ?, false)")) {
                ps.setString(1, applicationName(command, pid, host));
                ps.executeQuery().close();
            }
            boolean locked;
            try (Statement s = c.createStatement(); ResultSet rs = s.executeQuery("select pg_try_advisory_lock(" + KEY + ")")) {
                rs.next();
                locked = rs.getBoolean(1);
            }
            if (!locked) {
                Holder other = findHolder(c);
                throw new RetrainLockedException(other == null
                        ? "another retrain held the retrain lock a moment ago; run again"
                        : "another retrain is running: " + other.describe()
                                + "; this one stopped without changing anything (retrains never overlap; try again when it has finished)",
                        other);
            }
            Instant since;
            try (PreparedStatement ps = c.prepareStatement("insert into retrain_holder (singleton, backend_pid, host, process_id,"
                    + " command, started_at) values (true, pg_backend_pid(), ?, ?, ?, now())"
                    + " on conflict (singleton) do update set backend_pid = excluded.backend_pid, host = excluded.host,"
                    + " process_id = excluded.process_id, command = excluded.command, started_at = excluded.started_at"
                    + " returning backend_pid, started_at")) {
                ps.setString(1, host);
                ps.setLong(2, pid);
                ps.setString(3, command);
                try (ResultSet rs = ps.executeQuery()) {
                    rs.next();
                    since = rs.getObject(2, OffsetDateTime.class).toInstant();
                    RetrainLock lock = new RetrainLock(database, c, new Holder(host, pid, command, since, rs.getInt(1),
                            applicationName(command, pid, host), null));
                    c = null; // owned by the lock now
                    return lock;
                }
            }
        } catch (SQLException e) {
            throw SqlFailures.translate(e, "taking the retrain lock", database.description());
        } finally {
            if (c != null) {
                discard(database, c);
            }
        }
    }

    /** This holder, as others see it. */
    public Holder holder() {
        return holder;
    }

    /**
     * Checks that the lock is still held (its session is alive): called before anything that must
     * happen only under the lock, such as failing orphaned versions or moving the active pointer.
     *
     * @throws DatabaseUnavailableException when the lock session was lost
     */
    public void verifyHeld() {
        boolean held;
        try (Statement s = connection.createStatement();
             ResultSet rs = s.executeQuery("select count(*) from pg_locks l where l.pid = pg_backend_pid() and " + HELD_BY_KEY)) {
            rs.next();
            held = rs.getLong(1) == 1;
        } catch (SQLException e) {
            throw new DatabaseUnavailableException("lost the session holding the retrain lock on " + database.description()
                    + ": " + e.getMessage() + "; another retrain may have started, so this one stops here", e);
        }
        if (!held) {
            throw new DatabaseFailureException("the session of this retrain no longer holds the retrain lock on "
                    + database.description() + "; another retrain may have started, so this one stops here");
        }
    }

    /** Releases the lock: removes the holder row and ends the session. Safe to call twice. */
    @Override
    public void close() {
        if (closed) {
            return;
        }
        closed = true;
        try (Statement s = connection.createStatement()) {
            s.executeUpdate("delete from retrain_holder where backend_pid = pg_backend_pid()");
            s.execute("select pg_advisory_unlock(" + KEY + ")");
        } catch (SQLException e) {
            // the session is going away below, and its lock with it
        }
        discard(database, connection);
    }

    private static Holder findHolder(Connection c) throws SQLException {
        try (Statement s = c.createStatement(); ResultSet rs = s.executeQuery(
                "select l.pid, a.application_name, host(a.client_addr), a.backend_start, h.host, h.process_id, h.command, h.started_at"
                        + " from pg_locks l left join pg_stat_activity a on a.pid = l.pid"
                        + " left join retrain_holder h on h.backend_pid = l.pid where " + HELD_BY_KEY)) {
            if (!rs.next()) {
                return null;
            }
            OffsetDateTime sessionStart = rs.getObject(4, OffsetDateTime.class);
            OffsetDateTime lockedSince = rs.getObject(8, OffsetDateTime.class);
            String host = rs.getString(5);
            OffsetDateTime since = host != null ? lockedSince : sessionStart;
            return new Holder(host, rs.getLong(6), rs.getString(7), since == null ? null : since.toInstant(), rs.getInt(1),
                    rs.getString(2), rs.getString(3));
        }
    }

    /** Ends the connection's session instead of returning it to the pool, so no lock or setting outlives the run. */
    private static void discard(Database database, Connection c) {
        if (database.dataSource() instanceof HikariDataSource pool) {
            pool.evictConnection(c);
            return;
        }
        try {
            c.close();
        } catch (SQLException ignored) {
            // already broken
        }
    }

    static String applicationName(String command, long pid, String host) {
        String name = String.format(Locale.ROOT, "%s %d@%s", command, pid, host);
        return name.length() <= MAX_APPLICATION_NAME ? name : name.substring(0, MAX_APPLICATION_NAME);
    }

    /** The kernel's host name (no name lookup on the network), else {@code HOSTNAME}, else "unknown-host". */
    private static String hostName() {
        try {
            String name = Files.readString(Path.of("/proc/sys/kernel/hostname"), StandardCharsets.US_ASCII).trim();
            if (!name.isEmpty()) {
                return name;
            }
        } catch (IOException | RuntimeException e) {
            // not Linux: fall back
        }
        String env = System.getenv("HOSTNAME");
        return env != null && !env.isBlank() ? env.trim() : "unknown-host";
    }
}
