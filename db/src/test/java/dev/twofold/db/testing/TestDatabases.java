package dev.twofold.db.testing;

import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import dev.twofold.db.embedded.DataDirectoryLock;
import dev.twofold.db.embedded.EmbeddedServer;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.DriverManager;
import java.sql.SQLException;
import java.sql.Statement;
import java.util.Comparator;
import java.util.Map;
import java.util.concurrent.atomic.AtomicInteger;
import java.util.stream.Stream;

/**
 * Real PostgreSQL for tests, found in this order: {@code TEST_JDBC_URL} (with {@code TEST_JDBC_USER},
 * {@code TEST_JDBC_PASSWORD}), a Docker engine through Testcontainers, else an embedded server
 * started once per JVM. {@link #fresh()} creates a new, empty, migrated database on that server so
 * test classes never see each other's rows.
 *
 * <p>The embedded test server lives in a temporary directory deleted when the JVM exits, runs
 * without fsync (test data need not survive a power cut) and shares its unpacked binaries between
 * runs under {@code java.io.tmpdir/twofold-pg-bin}.
 */
public final class TestDatabases {

    /** Connections per test database: enough for Flyway and a few concurrent readers. */
    public static final int POOL_SIZE = 4;
    static final String DOCKER_IMAGE = "postgres:16-alpine";
    static final Map<String, String> TEST_SERVER_SETTINGS = Map.of(
            "fsync", "off", "synchronous_commit", "off", "full_page_writes", "off", "max_connections", "200");

    private static final AtomicInteger COUNTER = new AtomicInteger();
    private static final Map<Database, Map<String, String>> ENVIRONMENTS = new java.util.concurrent.ConcurrentHashMap<>();
    private static Server server;

    private TestDatabases() {
    }

    /** Where new databases are created: an admin URL template and credentials. */
    record Server(String urlPrefix, String urlSuffix, String adminDatabase, String user, String password, String origin) {
        String url(String database) {
            return urlPrefix + database + urlSuffix;
        }
    }

    /** A new empty database with the Twofold schema applied; close it when the test class ends (that also drops it). */
    public static Database fresh() {
        Server s = server();
        String name = "twofold_test_" + ProcessHandle.current().pid() + "_" + COUNTER.incrementAndGet();
        admin(s, "create database " + name);
        Database db;
        try {
            db = Database.open(new DatabaseSettings(s.url(name), s.user(), s.password(),
                    Path.of(System.getProperty("java.io.tmpdir")), POOL_SIZE));
        } catch (RuntimeException e) {
            admin(s, "drop database if exists " + name + " with (force)");
            throw e;
        }
        ENVIRONMENTS.put(db, Map.of(DatabaseSettings.ENV_URL, s.url(name),
                DatabaseSettings.ENV_USER, s.user() == null ? "" : s.user(),
                DatabaseSettings.ENV_PASSWORD, s.password() == null ? "" : s.password()));
        db.onClose(() -> {
            ENVIRONMENTS.remove(db);
            admin(s, "drop database if exists " + name + " with (force)");
        });
        return db;
    }

    /**
     * The {@code TWOFOLD_DB_*} variables that reach a database made by {@link #fresh()}, for testing
     * commands that read {@code DatabaseSettings.fromEnvironment}.
     */
    public static Map<String, String> environment(Database db) {
        Map<String, String> env = ENVIRONMENTS.get(db);
        if (env == null) {
            throw new IllegalArgumentException("not an open database from TestDatabases.fresh(): " + db.description());
        }
        return env;
    }

    /** Which server the tests of this JVM use (for messages). */
    public static String origin() {
        return server().origin();
    }

    private static synchronized Server server() {
        if (server == null) {
            server = locate();
        }
        return server;
    }

    private static Server locate() {
        String url = System.getenv("TEST_JDBC_URL");
        if (url != null && !url.isBlank()) {
            return fromUrl(url, System.getenv("TEST_JDBC_USER"), System.getenv("TEST_JDBC_PASSWORD"), "TEST_JDBC_URL");
        }
        if (DockerPostgres.engineLikelyAvailable()) {
            Server docker = DockerPostgres.start();
            if (docker != null) {
                return docker;
            }
        }
        return startEmbedded();
    }

    static Server fromUrl(String url, String user, String password, String origin) {
        int query = url.indexOf('?');
        String path = query < 0 ? url : url.substring(0, query);
        String suffix = query < 0 ? "" : url.substring(query);
        int slash = path.indexOf('/', "jdbc:postgresql://".length());
        String prefix = slash < 0 ? path + "/" : path.substring(0, slash + 1);
        String adminDb = slash < 0 || slash == path.length() - 1 ? "postgres" : path.substring(slash + 1);
        return new Server(prefix, suffix, adminDb, user, password, origin);
    }

    private static Server startEmbedded() {
        try {
            Path dataDir = Files.createTempDirectory("twofold-test-pg-");
            Path binaries = sharedBinaries();
            EmbeddedServer embedded = DataDirectoryLock.holding(dataDir,
                    () -> EmbeddedServer.startOrJoin(dataDir, new EmbeddedServer.Options(binaries, TEST_SERVER_SETTINGS, false)));
            Runtime.getRuntime().addShutdownHook(new Thread(() -> {
                try {
                    DataDirectoryLock.holding(dataDir, () -> {
                        embedded.stop();
                        return null;
                    });
                } catch (RuntimeException e) {
                    // The JVM is exiting; a server that refuses to stop is reported by its log.
                }
                deleteTree(dataDir);
            }, "twofold-test-pg-stop"));
            return fromUrl(embedded.jdbcUrl("postgres"), embedded.user(), embedded.password(), embedded.toString());
        } catch (IOException e) {
            throw new UncheckedIOException("cannot create a temporary directory for the embedded test PostgreSQL", e);
        }
    }

    /** Where test runs unpack the PostgreSQL binaries once for all JVMs: the {@value EmbeddedServer#BINARIES_PROPERTY} property or tmp. */
    public static Path sharedBinaries() {
        String configured = System.getProperty(EmbeddedServer.BINARIES_PROPERTY);
        return configured != null && !configured.isBlank() ? Path.of(configured)
                : Path.of(System.getProperty("java.io.tmpdir"), "twofold-pg-bin");
    }

    private static void admin(Server s, String sql) {
        try (Connection c = DriverManager.getConnection(s.url(s.adminDatabase()), s.user(), s.password());
             Statement st = c.createStatement()) {
            st.execute(sql);
        } catch (SQLException e) {
            throw new IllegalStateException("test database set-up failed on " + s.origin() + " (" + sql + "): " + e.getMessage(), e);
        }
    }

    private static void deleteTree(Path dir) {
        try (Stream<Path> paths = Files.walk(dir)) {
            paths.sorted(Comparator.reverseOrder()).forEach(p -> p.toFile().delete());
        } catch (IOException | UncheckedIOException e) {
            // Temporary files; the OS cleans them eventually.
        }
    }

    /** Testcontainers, touched only when a Docker engine seems present, so its absence costs nothing. */
    static final class DockerPostgres {
        private DockerPostgres() {
        }

        static boolean engineLikelyAvailable() {
            if (System.getenv("DOCKER_HOST") != null) {
                return true;
            }
            String runtime = System.getenv("XDG_RUNTIME_DIR");
            return Files.exists(Path.of("/var/run/docker.sock"))
                    || Files.exists(Path.of(System.getProperty("user.home"), ".docker", "run", "docker.sock"))
                    || (runtime != null && Files.exists(Path.of(runtime, "docker.sock")));
        }

        /** A started container, or null when Testcontainers is missing or Docker does not answer. */
        static Server start() {
            try {
                Class.forName("org.testcontainers.DockerClientFactory");
                return Container.start();
            } catch (ClassNotFoundException | LinkageError e) {
                return null;
            } catch (RuntimeException e) {
                return null;
            }
        }

        /** Separate class so the Testcontainers types are loaded only here. */
        static final class Container {
            private Container() {
            }

            static Server start() {
                if (!org.testcontainers.DockerClientFactory.instance().isDockerAvailable()) {
                    return null;
                }
                @SuppressWarnings("resource") // lives as long as the JVM; Testcontainers' reaper removes it
                var pg = new org.testcontainers.postgresql.PostgreSQLContainer(DOCKER_IMAGE);
                pg.start();
                return fromUrl(pg.getJdbcUrl(), pg.getUsername(), pg.getPassword(), "Testcontainers " + DOCKER_IMAGE);
            }
        }
    }
}
