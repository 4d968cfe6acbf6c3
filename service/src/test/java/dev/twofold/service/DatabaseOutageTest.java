package dev.twofold.service;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import ch.qos.logback.classic.Level;
import ch.qos.logback.classic.spi.ILoggingEvent;
import ch.qos.logback.core.Appender;
import ch.qos.logback.core.read.ListAppender;
import com.fasterxml.jackson.databind.JsonNode;
import dev.twofold.db.access.ApiKeys;
import dev.twofold.db.access.KeyRole;
import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import dev.twofold.db.embedded.DataDirectoryLock;
import dev.twofold.db.embedded.EmbeddedServer;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.service.http.ProblemType;
import dev.twofold.service.testing.ApiClient;
import dev.twofold.service.testing.Await;
import dev.twofold.service.testing.KitchenDatabase;
import java.io.IOException;
import java.net.InetAddress;
import java.net.ServerSocket;
import java.net.http.HttpResponse;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.PreparedStatement;
import java.sql.ResultSet;
import java.time.Duration;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.concurrent.ConcurrentLinkedQueue;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.function.BooleanSupplier;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import java.util.stream.Stream;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.Timeout;
import org.slf4j.LoggerFactory;

/**
 * {@code twofold serve} against a PostgreSQL this test stops and starts itself: an embedded server
 * in its own temporary data directory, on a fixed loopback port so the service's URL stays valid
 * across restarts (never the server the other tests share).
 *
 * <ul>
 *   <li>Down at start: the service binds and is live, not ready; it retries with exponential
 *       backoff, logging each attempt; when the database appears it reads the keys, loads the live
 *       model and becomes ready.</li>
 *   <li>Lost while serving: recommendations, predictions and similar items go on from memory, and
 *       key checks from the keys in memory; writes, erasures and model administration get 503 with
 *       Retry-After; when the database is back, writes work again by themselves. Every write
 *       acknowledged with 202, before, during and after, is in the database afterwards, and none
 *       refused while the database was down is.</li>
 * </ul>
 * Every wait is bounded; the class gives up after {@link #CLASS_TIMEOUT_MINUTES} minutes.
 */
@Timeout(value = DatabaseOutageTest.CLASS_TIMEOUT_MINUTES, unit = TimeUnit.MINUTES)
class DatabaseOutageTest {

    static final int CLASS_TIMEOUT_MINUTES = 6;
    /** Bound on each wait for the service to notice or recover: a bound on a broken test, not a speed target. */
    private static final Duration WAIT = Duration.ofSeconds(60);
    private static final Pattern ATTEMPT = Pattern.compile("attempt (\\d+) failed, next in (\\d+) ms");

    private static Path dataDir;
    private static EmbeddedServer server;
    private static int pgPort;
    private static EmbeddedServer.Options options;
    private static String password;
    private static long model;
    private static String readKey;
    private static String writeKey;
    private static String adminKey;
    private static final ListAppender<ILoggingEvent> LOGS = new ListAppender<>();
    private static Appender<ILoggingEvent> console;
    private static Level linkLevel;

    @BeforeAll
    static void prepare() throws IOException {
        captureLogs();
        dataDir = Files.createTempDirectory("twofold-outage-pg-");
        pgPort = freePort();
        // "-c port=N" after the server's own "-p": the later setting wins, so every start uses the same port
        options = new EmbeddedServer.Options(TestDatabases.sharedBinaries(), Map.of("port", Integer.toString(pgPort)),
                false);
        startDatabase();
        try (Database db = Database.open(settings())) {
            KitchenDatabase.importRatings(db, dataDir);
            model = KitchenDatabase.publishModel(db);
            ApiKeys keys = new ApiKeys(db);
            readKey = keys.create("outage-read", KeyRole.READ).key();
            writeKey = keys.create("outage-write", KeyRole.WRITE).key();
            adminKey = keys.create("outage-admin", KeyRole.ADMIN).key();
        }
    }

    @AfterAll
    static void cleanUp() {
        try {
            stopDatabase();
        } finally {
            deleteTree(dataDir);
            restoreLogs();
        }
    }

    @Test
    void a_service_started_while_the_database_is_down_backs_off_then_becomes_ready_with_the_live_model()
            throws Exception {
        stopDatabase();
        try (Serving serving = Serving.start()) {
            ApiClient reader = serving.api.withKey(readKey);
            assertEquals(200, serving.api.get("/health/live").statusCode());
            HttpResponse<String> notReady = serving.api.get("/health/ready");
            assertEquals(503, notReady.statusCode(), notReady.body());
            assertTrue(notReady.headers().firstValue("Retry-After").isPresent());
            HttpResponse<String> noKeysYet = reader.get("/v1/users/ana/recommendations");
            assertProblem(noKeysYet, 503, ProblemType.DATABASE_UNAVAILABLE);
            assertProblem(serving.api.withKey(writeKey).postJson("/v1/ratings", rating("early-cook")), 503,
                    ProblemType.DATABASE_UNAVAILABLE);

            await("three failed attempts are logged", () -> attemptDelays().size() >= 3);
            List<Long> delays = attemptDelays();
            assertEquals(List.of(DatabaseLink.FIRST_RETRY_MS, DatabaseLink.FIRST_RETRY_MS * 2,
                    DatabaseLink.FIRST_RETRY_MS * 4), delays.subList(0, 3), "exponential backoff: " + logs());
            assertEquals(503, serving.api.get("/health/ready").statusCode());

            startDatabase();
            await("ready once the database answers", () -> serving.api.get("/health/ready").statusCode() == 200);
            assertEquals(model, ApiClient.json(serving.api.get("/health/ready")).path("model").asLong());
            HttpResponse<String> served = reader.get("/v1/users/ana/recommendations");
            assertEquals(200, served.statusCode(), served.body());
            assertEquals("model", ApiClient.json(served).path("strategy").asText());
            assertTrue(logs().contains("answers again after"), logs());
        }
    }

    @Test
    void a_database_lost_while_serving_stops_writes_not_reads_and_nothing_acknowledged_is_lost() throws Exception {
        startDatabase();
        ExecutorService writerThread = Executors.newSingleThreadExecutor();
        ConcurrentLinkedQueue<String> acknowledged = new ConcurrentLinkedQueue<>();
        List<String> refused = new ArrayList<>();
        try (Serving serving = Serving.start()) {
            await("ready", () -> serving.api.get("/health/ready").statusCode() == 200);
            ApiClient reader = serving.api.withKey(readKey);
            ApiClient writer = serving.api.withKey(writeKey);
            ApiClient admin = serving.api.withKey(adminKey);

            // one writer keeps sending through the outage; every 202 it gets must be in the database afterwards
            AtomicBoolean keepWriting = new AtomicBoolean(true);
            Future<Integer> steady = writerThread.submit(() -> {
                int n = 0;
                while (keepWriting.get()) {
                    String user = "steady-" + n++;
                    HttpResponse<String> r = writer.postJson("/v1/ratings", rating(user));
                    if (r.statusCode() == 202) {
                        acknowledged.add(user);
                    } else if (r.statusCode() != 503) {
                        throw new AssertionError(user + " -> " + r.statusCode() + " " + r.body());
                    } else {
                        Thread.sleep(20);
                    }
                }
                return n;
            });
            await("writes are acknowledged", () -> acknowledged.size() >= 5);

            stopDatabase();
            await("writes are refused once the database is gone",
                    () -> writer.postJson("/v1/ratings", rating("probe-" + System.nanoTime())).statusCode() == 503);
            assertEquals("0.0", metric(serving.api, "twofold_database_up"));

            for (int i = 0; i < 5; i++) {
                String user = "refused-" + i;
                refused.add(user);
                HttpResponse<String> r = writer.postJson("/v1/ratings", rating(user));
                assertProblem(r, 503, ProblemType.DATABASE_UNAVAILABLE);
                assertTrue(ApiClient.json(r).path("detail").asText().contains("nothing was written"), r.body());
            }
            assertProblem(writer.postJson("/v1/trust", "[{\"truster\": \"refused-0\", \"trustee\": \"ana\"}]"), 503,
                    ProblemType.DATABASE_UNAVAILABLE);
            assertProblem(admin.send("DELETE", "/v1/users/ben"), 503, ProblemType.DATABASE_UNAVAILABLE);
            assertProblem(admin.get("/v1/models"), 503, ProblemType.DATABASE_UNAVAILABLE);

            // serving from memory, keys checked from memory
            assertEquals(200, serving.api.get("/health/ready").statusCode());
            for (String user : List.of("ana", "ben", "somebody-new")) {
                HttpResponse<String> r = reader.get("/v1/users/" + user + "/recommendations?count=3");
                assertEquals(200, r.statusCode(), r.body());
            }
            assertEquals(200, reader.postJson("/v1/predictions",
                    "{\"pairs\": [{\"user\": \"ana\", \"item\": \"jam\"}]}").statusCode());
            assertEquals(200, reader.get("/v1/items/soup/similar?count=2").statusCode());
            assertProblem(serving.api.get("/v1/users/ana/recommendations"), 401, ProblemType.UNAUTHORIZED);
            assertProblem(serving.api.withKey("tf_never-issued").get("/v1/users/ana/recommendations"), 401,
                    ProblemType.UNAUTHORIZED);
            assertProblem(reader.postJson("/v1/ratings", rating("reader-cook")), 403, ProblemType.FORBIDDEN);

            startDatabase();
            await("writes work again by themselves",
                    () -> writer.postJson("/v1/ratings", rating("back-" + System.nanoTime())).statusCode() == 202);
            await("the steady writer is acknowledged again", () -> {
                int before = acknowledged.size();
                return waitFor(500) && acknowledged.size() > before;
            });
            assertEquals("1.0", metric(serving.api, "twofold_database_up"));
            HttpResponse<String> erased = admin.send("DELETE", "/v1/users/ben");
            assertEquals(204, erased.statusCode(), erased.body());
            keepWriting.set(false);
            steady.get(WAIT.toSeconds(), TimeUnit.SECONDS);
        } finally {
            writerThread.shutdownNow();
            writerThread.awaitTermination(WAIT.toSeconds(), TimeUnit.SECONDS);
        }
        List<String> acked = List.copyOf(acknowledged);
        assertTrue(acked.size() >= 6, "acknowledged before and after the outage: " + acked);
        assertEquals(acked, stored(acked), "every acknowledged write is in the database");
        assertEquals(List.of(), stored(refused), "no write refused while the database was down is in it");
    }

    // ---- the service under test -----------------------------------------------------------------

    /** {@code twofold serve} on its own thread, on the outage database, stopped by close(). */
    private static final class Serving implements AutoCloseable {
        final ExecutorService runner;
        final ServeCommand serve;
        final Future<Integer> exit;
        final ApiClient api;

        private Serving(ServeCommand serve, Future<Integer> exit, ExecutorService runner) throws InterruptedException {
            this.serve = serve;
            this.exit = exit;
            this.runner = runner;
            await("serving", () -> serve.port() > 0 || exit.isDone());
            assertTrue(serve.port() > 0, "serve did not start: " + logs());
            this.api = new ApiClient(serve.port());
        }

        static Serving start() throws InterruptedException {
            Map<String, String> env = new HashMap<>();
            env.put(DatabaseSettings.ENV_URL, url());
            env.put(DatabaseSettings.ENV_USER, EmbeddedServer.SUPERUSER);
            env.put(DatabaseSettings.ENV_PASSWORD, password);
            env.put(ServiceSettings.HOST_VARIABLE, "127.0.0.1");
            env.put(ServiceSettings.PORT_VARIABLE, "0");
            ExecutorService runner = Executors.newSingleThreadExecutor();
            ServeCommand serve = new ServeCommand(env, false);
            return new Serving(serve, runner.submit(serve), runner);
        }

        @Override
        public void close() throws Exception {
            serve.stop();
            try {
                assertEquals(0, exit.get(WAIT.toSeconds(), TimeUnit.SECONDS));
            } finally {
                runner.shutdownNow();
                runner.awaitTermination(WAIT.toSeconds(), TimeUnit.SECONDS);
            }
        }
    }

    // ---- the database the test stops and starts ----------------------------------------------------

    private static synchronized void startDatabase() {
        server = DataDirectoryLock.holding(dataDir, () -> EmbeddedServer.startOrJoin(dataDir, options));
        assertEquals(pgPort, server.port(), "the server came back on its port");
        password = server.password();
    }

    /** Fast shutdown: sessions are ended at once, as when a database is restarted under a running service. */
    private static synchronized void stopDatabase() {
        if (server != null) {
            DataDirectoryLock.holding(dataDir, () -> {
                server.stop();
                return null;
            });
        }
    }

    private static String url() {
        return "jdbc:postgresql://127.0.0.1:" + pgPort + "/" + EmbeddedServer.DATABASE;
    }

    private static DatabaseSettings settings() {
        return new DatabaseSettings(url(), EmbeddedServer.SUPERUSER, password, dataDir, DatabaseSettings.MIN_POOL_SIZE);
    }

    /** Which of {@code users} have a rating in the database, in the order given. */
    private static List<String> stored(List<String> users) {
        startDatabase();
        List<String> found = new ArrayList<>();
        try (Database db = Database.open(settings());
                Connection c = db.dataSource().getConnection();
                PreparedStatement ps = c.prepareStatement("select 1 from ratings r join users u on u.idx = r.user_idx"
                        + " where u.external_id = ?")) {
            for (String user : users) {
                ps.setString(1, user);
                try (ResultSet rs = ps.executeQuery()) {
                    if (rs.next()) {
                        found.add(user);
                    }
                }
            }
        } catch (java.sql.SQLException e) {
            throw new AssertionError("reading back the writes failed", e);
        }
        return found;
    }

    // ---- helpers --------------------------------------------------------------------------------

    private static String rating(String user) {
        return "[{\"user\": \"" + user + "\", \"item\": \"soup\", \"rating\": 4}]";
    }

    private static void assertProblem(HttpResponse<String> response, int status, ProblemType type) {
        assertEquals(status, response.statusCode(), response.body());
        JsonNode problem = ApiClient.json(response);
        assertEquals(type.uri(), problem.path("type").asText(), response.body());
        if (status == 503) {
            assertTrue(response.headers().firstValue("Retry-After").isPresent(), "503 without Retry-After");
        }
    }

    /** The value of an unlabelled series in /metrics, as written there. */
    private static String metric(ApiClient api, String series) {
        String text = api.get("/metrics").body();
        Matcher m = Pattern.compile("(?m)^" + series + " (\\S+)$").matcher(text);
        assertTrue(m.find(), series + " is not in /metrics");
        return m.group(1);
    }

    /** Delays announced by the failed attempts to reach the database, in order. */
    private static List<Long> attemptDelays() {
        List<Long> delays = new ArrayList<>();
        for (ILoggingEvent event : List.copyOf(LOGS.list)) {
            Matcher m = ATTEMPT.matcher(event.getFormattedMessage());
            if (m.find()) {
                delays.add(Long.parseLong(m.group(2)));
            }
        }
        return delays;
    }

    private static String logs() {
        StringBuilder out = new StringBuilder();
        for (ILoggingEvent event : List.copyOf(LOGS.list)) {
            out.append('\n').append(event.getLevel()).append(' ').append(event.getLoggerName()).append(" - ")
                    .append(event.getFormattedMessage());
        }
        return out.toString();
    }

    /** The outage makes the service log warnings by design: they are kept for the assertions, not printed. */
    private static void captureLogs() {
        ch.qos.logback.classic.Logger root = (ch.qos.logback.classic.Logger) LoggerFactory.getLogger(
                org.slf4j.Logger.ROOT_LOGGER_NAME);
        ch.qos.logback.classic.Logger link = (ch.qos.logback.classic.Logger) LoggerFactory.getLogger(DatabaseLink.class);
        linkLevel = link.getLevel();
        link.setLevel(Level.INFO);
        LOGS.start();
        root.addAppender(LOGS);
        console = root.getAppender("STDERR");
        if (console != null) {
            root.detachAppender(console);
        }
    }

    private static void restoreLogs() {
        ch.qos.logback.classic.Logger root = (ch.qos.logback.classic.Logger) LoggerFactory.getLogger(
                org.slf4j.Logger.ROOT_LOGGER_NAME);
        root.detachAppender(LOGS);
        if (console != null) {
            root.addAppender(console);
        }
        ((ch.qos.logback.classic.Logger) LoggerFactory.getLogger(DatabaseLink.class)).setLevel(linkLevel);
    }

    private static void await(String what, BooleanSupplier condition) throws InterruptedException {
        Await.until(what, WAIT, condition, () -> "; the log:" + logs());
    }

    private static boolean waitFor(long ms) {
        try {
            Thread.sleep(ms);
            return true;
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            return false;
        }
    }

    private static int freePort() throws IOException {
        try (ServerSocket s = new ServerSocket(0, 1, InetAddress.getLoopbackAddress())) {
            return s.getLocalPort();
        }
    }

    private static void deleteTree(Path dir) {
        if (dir == null) {
            return;
        }
        try (Stream<Path> paths = Files.walk(dir)) {
            paths.sorted(Comparator.reverseOrder()).forEach(p -> p.toFile().delete());
        } catch (IOException e) {
            // a temporary directory: the OS cleans it eventually
        }
    }
}
