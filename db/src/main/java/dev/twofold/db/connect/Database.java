package dev.twofold.db.connect;

import com.zaxxer.hikari.HikariConfig;
import com.zaxxer.hikari.HikariDataSource;
import com.zaxxer.hikari.metrics.MetricsTrackerFactory;
import com.zaxxer.hikari.pool.HikariPool;
import dev.twofold.db.DatabaseFailureException;
import dev.twofold.db.DatabaseUnavailableException;
import dev.twofold.db.TwofoldException;
import dev.twofold.db.embedded.DataDirectoryLock;
import dev.twofold.db.embedded.EmbeddedServer;
import dev.twofold.db.internal.SqlFailures;
import java.sql.Connection;
import java.sql.PreparedStatement;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.util.ArrayList;
import java.util.List;
import java.util.Properties;
import java.util.concurrent.atomic.AtomicInteger;
import javax.sql.DataSource;
import org.flywaydb.core.Flyway;
import org.flywaydb.core.api.FlywayException;
import org.postgresql.Driver;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * An open, migrated Twofold database: a HikariCP pool over an external PostgreSQL or over the
 * embedded server. A long-running process that must start while an external server is down opens
 * it with {@link #openDeferred}: the pool then connects when the server answers, and
 * {@link #ensureSchema()} migrates once it does. {@link #close()} closes the pool and, for the embedded server, stops it when no
 * other client is still connected (whichever Twofold process closes last turns the server off;
 * while others are connected it is left running for them). Safe to close twice.
 */
public final class Database implements AutoCloseable {

    /** How long a caller waits for a free pooled connection. */
    public static final long BORROW_TIMEOUT_MS = 10_000;
    /** TCP connect time-out of one new connection. */
    public static final int CONNECT_TIMEOUT_S = 5;
    /** Authentication/login time-out of one new connection. */
    public static final int LOGIN_TIMEOUT_S = 10;
    public static final long VALIDATION_TIMEOUT_MS = 3_000;
    public static final long IDLE_TIMEOUT_MS = 10 * 60_000;
    public static final long MAX_LIFETIME_MS = 30 * 60_000;
    /**
     * How long a closing process waits for other clients to disappear before it leaves the embedded
     * server running for them: a process that closed a moment ago may still show its sessions.
     */
    public static final long OTHER_CLIENTS_GRACE_MS = 2_000;
    static final long OTHER_CLIENTS_POLL_MS = 100;
    /** Connections kept open while idle: at least one, so a joined embedded server sees this process as a client. */
    public static final int MIN_IDLE_CONNECTIONS = 2;
    /** TCP connect time-out of a {@link #probe()}: short, since a probe only asks whether the server answers. */
    public static final int PROBE_CONNECT_TIMEOUT_S = 2;
    /** Login and query time-out of a {@link #probe()}. */
    public static final int PROBE_QUERY_TIMEOUT_S = 3;

    private static final Logger LOG = LoggerFactory.getLogger(Database.class);
    private static final AtomicInteger POOLS = new AtomicInteger();

    private final HikariDataSource pool;
    private final EmbeddedServer server;
    private final String applicationName;
    private final String description;
    private final String jdbcUrl;
    private final List<Runnable> closeActions = new ArrayList<>();
    private boolean closed;
    private volatile boolean migrated;

    private Database(HikariDataSource pool, EmbeddedServer server, String applicationName, String description, String jdbcUrl) {
        this.pool = pool;
        this.server = server;
        this.applicationName = applicationName;
        this.description = description;
        this.jdbcUrl = jdbcUrl;
    }

    /**
     * Connects (starting or joining the embedded server when no URL is set) and applies pending
     * migrations.
     *
     * @throws DatabaseUnavailableException when the server cannot be reached
     */
    public static Database open(DatabaseSettings settings) {
        String applicationName = "twofold-" + ProcessHandle.current().pid() + "-" + POOLS.incrementAndGet();
        Database db;
        if (settings.embedded()) {
            // Held until the pool has its first connection, so a closing process sees us as a client.
            db = DataDirectoryLock.holding(settings.dataDir(), () -> embedded(
                    EmbeddedServer.startOrJoin(settings.dataDir(), EmbeddedServer.Options.forDataDir(settings.dataDir())),
                    applicationName, settings.poolSize()));
        } else {
            String where = describe(settings.url(), false);
            db = new Database(pool(settings.url(), settings.user(), settings.password(), settings.poolSize(), applicationName, where,
                    true), null, applicationName, where, settings.url());
        }
        db.migrateOrClose();
        LOG.info("connected to {}", db.description);
        return db;
    }

    /**
     * Like {@link #open}, but an external server need not answer yet: the pool starts without a
     * connection and fills itself once the server answers; until then borrowing a connection fails
     * after {@link #BORROW_TIMEOUT_MS}. Call {@link #probe()} to ask whether it answers now and
     * {@link #ensureSchema()} before the first use. The embedded server runs in this machine, so it
     * is started or joined (and migrated) at once, as by {@link #open}.
     *
     * @throws DatabaseUnavailableException when the embedded server cannot be started or joined
     */
    public static Database openDeferred(DatabaseSettings settings) {
        if (settings.embedded()) {
            return open(settings);
        }
        String applicationName = "twofold-" + ProcessHandle.current().pid() + "-" + POOLS.incrementAndGet();
        String where = describe(settings.url(), false);
        Database db = new Database(pool(settings.url(), settings.user(), settings.password(), settings.poolSize(),
                applicationName, where, false), null, applicationName, where, settings.url());
        LOG.info("will use {} once it answers", db.description);
        return db;
    }

    /** A pool on an embedded server the caller has just started or joined while holding its {@link DataDirectoryLock}. */
    private static Database embedded(EmbeddedServer server, String applicationName, int poolSize) {
        String url = server.jdbcUrl(EmbeddedServer.DATABASE);
        String where = "embedded PostgreSQL 127.0.0.1:" + server.port() + "/" + EmbeddedServer.DATABASE + " (data "
                + server.dataDir() + ", " + (server.startedHere() ? "started by this process" : "joined") + ")";
        HikariDataSource pool = pool(url, server.user(), server.password(), poolSize, applicationName, where, true);
        return new Database(pool, server, applicationName, where, url);
    }

    /**
     * Whether the server answers right now: one connection outside the pool, {@code select 1}, and
     * close, all within a few seconds ({@link #PROBE_CONNECT_TIMEOUT_S}, {@link #PROBE_QUERY_TIMEOUT_S})
     * instead of the pool's borrow time-out.
     *
     * @throws DatabaseUnavailableException saying why not
     */
    public void probe() {
        Properties props = new Properties();
        if (pool.getUsername() != null) {
            props.setProperty("user", pool.getUsername());
        }
        if (pool.getPassword() != null) {
            props.setProperty("password", pool.getPassword());
        }
        props.setProperty("ApplicationName", applicationName);
        props.setProperty("connectTimeout", Integer.toString(PROBE_CONNECT_TIMEOUT_S));
        props.setProperty("loginTimeout", Integer.toString(PROBE_QUERY_TIMEOUT_S));
        props.setProperty("socketTimeout", Integer.toString(PROBE_QUERY_TIMEOUT_S));
        try (Connection c = new Driver().connect(pool.getJdbcUrl(), props)) {
            if (c == null) {
                throw new DatabaseUnavailableException(description + " has a URL the PostgreSQL driver does not accept", null);
            }
            try (PreparedStatement ps = c.prepareStatement("select 1")) {
                ps.setQueryTimeout(PROBE_QUERY_TIMEOUT_S);
                ps.executeQuery().close();
            }
        } catch (SQLException e) {
            throw new DatabaseUnavailableException(description + " does not answer: " + e.getMessage(), e);
        }
    }

    /**
     * Applies pending migrations unless this database has done so already (every {@link #open}ed
     * one has); safe to call again after a failure.
     *
     * @throws DatabaseUnavailableException when the server cannot be reached
     * @throws DatabaseFailureException when the schema cannot be migrated
     */
    public void ensureSchema() {
        if (migrated) {
            return;
        }
        synchronized (this) {
            if (!migrated) {
                migrate();
                migrated = true;
            }
        }
    }

    public DataSource dataSource() {
        return pool;
    }

    /** A description safe to log: host, port, database name and whether it is embedded; never the password. */
    public String description() {
        return description;
    }

    /** The JDBC URL of the pool, with any password parameter masked. */
    public String jdbcUrl() {
        return DatabaseSettings.redact(jdbcUrl);
    }

    public boolean embedded() {
        return server != null;
    }

    /**
     * Reports the pool's figures (connections in use, idle and awaited, borrow and usage times,
     * time-outs) to {@code factory}, for example HikariCP's Micrometer tracker. Set at most once per
     * database; the pool name ({@code twofold-<pid>-<n>}) tells pools apart.
     *
     * @throws IllegalStateException when a tracker is already set
     */
    public void trackPool(MetricsTrackerFactory factory) {
        pool.setMetricsTrackerFactory(factory);
    }

    /** Registers an action run once by {@link #close()} after the pool is closed (later registrations run first). */
    public synchronized void onClose(Runnable action) {
        closeActions.add(0, action);
    }

    @Override
    public void close() {
        synchronized (this) {
            if (closed) {
                return;
            }
            closed = true;
        }
        if (server == null) {
            pool.close();
            runCloseActions();
            return;
        }
        DataDirectoryLock.holding(server.dataDir(), () -> {
            long others = otherClients();
            long deadline = System.nanoTime() + OTHER_CLIENTS_GRACE_MS * 1_000_000L;
            while (others > 0 && System.nanoTime() < deadline && pause(OTHER_CLIENTS_POLL_MS)) {
                others = otherClients();
            }
            pool.close();
            runCloseActions();
            if (others == 0) {
                server.stop();
                LOG.info("stopped {}: no other client was connected", description);
            } else {
                LOG.info("left {} running for {} other connection(s)", description, others);
            }
            return null;
        });
    }

    private static boolean pause(long ms) {
        try {
            Thread.sleep(ms);
            return true;
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            return false;
        }
    }

    /** Client connections to the server that are not from this pool (other Twofold processes, psql, ...). */
    private long otherClients() {
        try (Connection c = pool.getConnection();
             PreparedStatement ps = c.prepareStatement("select count(*) from pg_stat_activity where backend_type = 'client backend'"
                     + " and pid <> pg_backend_pid() and coalesce(application_name, '') <> ?")) {
            ps.setString(1, applicationName);
            try (ResultSet rs = ps.executeQuery()) {
                rs.next();
                return rs.getLong(1);
            }
        } catch (SQLException | RuntimeException e) {
            return 0; // the server is already gone or unusable: nobody can be using it through us
        }
    }

    private void runCloseActions() {
        List<Runnable> actions;
        synchronized (this) {
            actions = List.copyOf(closeActions);
        }
        for (Runnable action : actions) {
            try {
                action.run();
            } catch (RuntimeException e) {
                LOG.warn("a close action of {} failed: {}", description, e.toString());
            }
        }
    }

    private void migrateOrClose() {
        try {
            ensureSchema();
        } catch (RuntimeException e) {
            close();
            throw e;
        }
    }

    private void migrate() {
        try {
            Flyway.configure(Database.class.getClassLoader())
                    .dataSource(pool)
                    .locations("classpath:db/migration")
                    .load()
                    .migrate();
        } catch (FlywayException e) {
            SQLException sql = findSql(e);
            if (sql != null && SqlFailures.isConnectionFailure(sql)) {
                throw new DatabaseUnavailableException("lost the connection to " + description + " while migrating the schema: "
                        + sql.getMessage(), e);
            }
            if (sql != null && SqlFailures.INSUFFICIENT_PRIVILEGE.equals(sql.getSQLState())) {
                throw new DatabaseFailureException("the schema of " + description + " needs migrating, and this database"
                        + " user may not change it: " + sql.getMessage() + "; run any twofold command (twofold models list)"
                        + " once as the owner of the tables, then start this one again", e);
            }
            throw new DatabaseFailureException("migrating the schema of " + description + " failed: " + e.getMessage()
                    + "; the database may have been changed by hand or by a newer Twofold", e);
        }
    }

    /** @param failFast try one connection at once and fail with a clear message, else start empty and connect later */
    private static HikariDataSource pool(String url, String user, String password, int size, String applicationName, String where,
            boolean failFast) {
        HikariConfig config = new HikariConfig();
        config.setPoolName(applicationName);
        config.setJdbcUrl(url);
        config.setUsername(user);
        config.setPassword(password);
        config.setMaximumPoolSize(size);
        config.setMinimumIdle(Math.min(MIN_IDLE_CONNECTIONS, size));
        config.setConnectionTimeout(BORROW_TIMEOUT_MS);
        config.setValidationTimeout(VALIDATION_TIMEOUT_MS);
        config.setIdleTimeout(IDLE_TIMEOUT_MS);
        config.setMaxLifetime(MAX_LIFETIME_MS);
        // 1: try once at start and fail fast with a clear message; -1: start empty, connect when the server answers
        config.setInitializationFailTimeout(failFast ? 1 : -1);
        config.addDataSourceProperty("ApplicationName", applicationName);
        config.addDataSourceProperty("connectTimeout", Integer.toString(CONNECT_TIMEOUT_S));
        config.addDataSourceProperty("loginTimeout", Integer.toString(LOGIN_TIMEOUT_S));
        config.addDataSourceProperty("tcpKeepAlive", "true");
        config.addDataSourceProperty("reWriteBatchedInserts", "true");
        try {
            return new HikariDataSource(config);
        } catch (HikariPool.PoolInitializationException e) {
            throw unreachable(url, user, where, e);
        }
    }

    private static TwofoldException unreachable(String url, String user, String where, Exception e) {
        SQLException sql = findSql(e);
        String state = sql == null || sql.getSQLState() == null ? "" : sql.getSQLState();
        String reason = sql != null ? sql.getMessage() : e.getMessage();
        String check;
        if (state.startsWith("28")) {
            check = "check TWOFOLD_DB_USER and TWOFOLD_DB_PASSWORD (user '" + user + "')";
        } else if (state.equals("3D000")) {
            check = "create the database or fix its name in TWOFOLD_DB_URL";
        } else if (state.equals("53300")) {
            check = "the server has no free connection slots; lower TWOFOLD_DB_POOL_SIZE or raise max_connections";
        } else {
            check = "check that PostgreSQL is running and accepts TCP connections there, and that TWOFOLD_DB_URL is right";
        }
        return new DatabaseUnavailableException("cannot connect to " + where + " as user '" + user + "': " + reason + "; " + check, e);
    }

    /** "PostgreSQL host:port/db (external)" from a JDBC URL. */
    static String describe(String url, boolean embedded) {
        Properties p = Driver.parseURL(url, null);
        if (p == null) {
            return "PostgreSQL at " + DatabaseSettings.redact(url);
        }
        return "PostgreSQL " + p.getProperty("PGHOST", "localhost") + ":" + p.getProperty("PGPORT", "5432") + "/"
                + p.getProperty("PGDBNAME", "") + (embedded ? " (embedded)" : " (external)");
    }

    private static SQLException findSql(Throwable e) {
        for (Throwable t = e; t != null; t = t.getCause()) {
            if (t instanceof SQLException s) {
                return s;
            }
        }
        return null;
    }
}
