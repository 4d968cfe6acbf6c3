package dev.twofold.launch;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.twofold.db.access.ApiKeys;
import dev.twofold.db.access.KeyRole;
import dev.twofold.db.connect.Database;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.db.testing.TestDatabases;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.ResultSet;
import java.sql.Statement;
import java.time.Duration;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.MethodOrderer;
import org.junit.jupiter.api.Order;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.TestMethodOrder;
import org.junit.jupiter.api.io.TempDir;
import org.postgresql.PGConnection;
import org.postgresql.PGNotification;

/**
 * The retrain lifecycle as a data engineer's scheduler meets it: the shaded jar in real processes on
 * a real PostgreSQL, killed with SIGKILL at named points (the {@code twofold.pauseAt} test hook stops
 * a process there so the kill lands deterministically), two trains at once, rollback followed by a
 * running service.
 */
@TestMethodOrder(MethodOrderer.OrderAnnotation.class)
class RetrainLifecycleIT {

    static final int USERS = 300;
    static final int ITEMS = 100;
    /** Few epochs: the figures only need to be real. */
    static final String EPOCHS = "4";
    static final ObjectMapper JSON = new ObjectMapper();
    /** How long to wait for a notification that must arrive. */
    static final int NOTIFY_WAIT_MS = 10_000;
    /** How long a running service may take to switch models after a promotion or rollback. */
    static final Duration SWITCH_TIMEOUT = Duration.ofSeconds(30);
    static final HttpClient HTTP = HttpClient.newHttpClient();

    static Database database;
    static Map<String, String> env;
    /** A read key for the service's answers (it checks keys, as twofold serve does by default). */
    static String readKey;
    static ModelRegistry registry;

    @TempDir
    static Path work;

    @BeforeAll
    static void aCommunityWithALiveModel() throws Exception {
        database = TestDatabases.fresh();
        env = TestDatabases.environment(database);
        registry = new ModelRegistry(database);
        Path data = Files.createDirectories(work.resolve("community"));
        ok(LauncherProcess.run(env, work, "demo-data", "--out", data.toString(), "--users", Integer.toString(USERS),
                "--items", Integer.toString(ITEMS)));
        ok(LauncherProcess.run(env, work, "import", "--ratings", data.resolve("ratings.csv").toString(), "--trust",
                data.resolve("trust.csv").toString()));
        ok(LauncherProcess.run(env, work, "train", "--epochs", EPOCHS));
        assertTrue(registry.active().isPresent());
    }

    @AfterAll
    static void closeDatabase() {
        database.close();
    }

    @Test
    @Order(1)
    void a_trainer_killed_during_the_fit_leaves_the_live_model_and_the_next_run_fails_its_version() throws Exception {
        killedAt("fit", "training");
    }

    @Test
    @Order(2)
    void a_trainer_killed_while_writing_factors_leaves_no_factor_rows_and_the_live_model() throws Exception {
        long orphan = killedAt("store-factors", "training");
        assertEquals(0, count("select count(*) from model_user_factors where model_id = " + orphan),
                "the factor transaction died with the process");
    }

    @Test
    @Order(3)
    void a_trainer_killed_just_before_promotion_leaves_a_candidate_and_the_live_model() throws Exception {
        killedAt("promote", "candidate");
    }

    @Test
    @Order(4)
    void two_trains_at_once_one_exits_75_naming_the_holder_and_the_registry_stays_consistent() throws Exception {
        long live = registry.active().orElseThrow().id();
        int versions = registry.list().size();
        try (LauncherProcess first = LauncherProcess.start(List.of("-Dtwofold.pauseAt=fit"), env, work, "train",
                "--epochs", EPOCHS, "--json")) {
            first.awaitStderr("paused at fit");
            LauncherProcess second = LauncherProcess.run(env, work, "train", "--epochs", EPOCHS, "--json");
            assertEquals(75, second.exitCode(), second.describe());
            assertTrue(first.isAlive(), "the second one did not wait for the first");
            assertTrue(second.stderr().contains("another retrain is running: twofold train on host "), second.describe());
            assertTrue(second.stderr().contains("(process " + first.pid() + ")"), second.describe());
            JsonNode locked = JSON.readTree(second.stdout());
            assertEquals("locked", locked.get("outcome").asText());
            assertEquals(75, locked.get("exitCode").asInt());
            assertEquals(first.pid(), locked.at("/holder/processId").asLong());

            first.resume();
            assertEquals(0, first.await(), first.describe());
            JsonNode report = JSON.readTree(first.stdout());
            assertEquals("promoted", report.get("outcome").asText(), first.stdout());
            assertEquals(live, report.get("liveModelId").asLong());
            long id = report.get("modelId").asLong();
            assertEquals(id, registry.active().orElseThrow().id());
            assertEquals(versions + 1, registry.list().size(), "the refused train registered nothing");
            assertEquals(0, count("select count(*) from models where status = 'training'"));
            assertEquals(1, count("select count(*) from models where status = 'active'"));
        }
    }

    @Test
    @Order(5)
    void rollback_returns_to_the_previous_model_and_tells_running_services() throws Exception {
        long live = registry.active().orElseThrow().id();
        long previous = registry.previous().orElseThrow();
        try (Connection listener = database.dataSource().getConnection()) {
            try (Statement s = listener.createStatement()) {
                s.execute("listen " + ModelRegistry.NOTIFY_CHANNEL);
            }
            LauncherProcess rollback = LauncherProcess.run(env, work, "models", "rollback");
            assertEquals(0, rollback.exitCode(), rollback.describe());
            assertTrue(rollback.stdout().contains("model " + previous + " is active again (model " + live + " retired"),
                    rollback.describe());
            assertEquals(previous, registry.active().orElseThrow().id());
            PGNotification[] got = listener.unwrap(PGConnection.class).getNotifications(NOTIFY_WAIT_MS);
            assertNotNull(got, "a service listening on " + ModelRegistry.NOTIFY_CHANNEL + " hears of the rollback");
            assertEquals(Long.toString(previous), got[got.length - 1].getParameter());
            try (Statement s = listener.createStatement()) {
                s.execute("unlisten *");
            }
        }
        JsonNode list = JSON.readTree(LauncherProcess.run(env, work, "models", "list", "--json").stdout());
        assertEquals(previous, list.get("active").asLong());
        assertEquals(live, list.get("previous").asLong());
        LauncherProcess back = LauncherProcess.run(env, work, "models", "promote", Long.toString(live));
        assertEquals(0, back.exitCode(), back.describe());
        assertEquals(live, registry.active().orElseThrow().id());
    }

    @Test
    @Order(6)
    void an_import_killed_before_it_commits_leaves_the_old_data_set_whole() throws Exception {
        String before = checksum();
        Path replacement = work.resolve("replacement.csv");
        Files.writeString(replacement, "user,item,rating\ncook-new,recipe-new,5\n", StandardCharsets.UTF_8);
        try (LauncherProcess p = LauncherProcess.start(List.of("-Dtwofold.pauseAt=import-write"), env, work, "import",
                "--mode", "replace", "--ratings", replacement.toString())) {
            p.awaitStderr("paused at import-write");
            assertEquals(LauncherProcess.EXIT_AFTER_SIGKILL, p.killHard());
        }
        assertEquals(before, checksum());
    }

    @Test
    @Order(7)
    void a_candidate_judged_against_a_model_replaced_by_hand_during_the_run_is_kept_not_promoted() throws Exception {
        long live = registry.active().orElseThrow().id();
        long older = registry.previous().orElseThrow();
        try (LauncherProcess p = LauncherProcess.start(List.of("-Dtwofold.pauseAt=promote"), env, work, "train",
                "--epochs", EPOCHS, "--json")) {
            p.awaitStderr("paused at promote");
            ok(LauncherProcess.run(env, work, "models", "promote", Long.toString(older))); // a person steps in
            p.resume();
            assertEquals(0, p.await(), p.describe());
            JsonNode report = JSON.readTree(p.stdout());
            assertEquals("candidate", report.get("outcome").asText());
            assertEquals(live, report.get("liveModelId").asLong());
            assertEquals(older, report.get("activeModelId").asLong());
            assertTrue(report.get("reason").asText().startsWith("the active model changed while this retrain ran"),
                    report.toString());
            ModelHeader kept = registry.find(report.get("modelId").asLong()).orElseThrow();
            assertEquals("candidate", kept.status());
            assertEquals(report.get("reason").asText(), kept.reason());
        }
        assertEquals(older, registry.active().orElseThrow().id(), "the person's choice stands");
    }

    @Test
    @Order(8)
    void a_running_service_follows_a_rollback_and_a_promotion() throws Exception {
        long live = registry.active().orElseThrow().id();
        long previous = registry.previous().orElseThrow();
        String user = aUserWithRatings();
        readKey = new ApiKeys(database).create("lifecycle-reader", KeyRole.READ).key();
        int port = LauncherProcess.freePort();
        try (LauncherProcess serve = LauncherProcess.start(
                LauncherProcess.env(env, "TWOFOLD_HTTP_PORT", Integer.toString(port)), work, "serve")) {
            String url = "http://127.0.0.1:" + port + "/v1/users/" + user + "/recommendations?count=5";
            serve.awaitReady(HTTP, "http://127.0.0.1:" + port + "/health/ready");
            assertEquals(live, servedModel(url));

            ok(LauncherProcess.run(env, work, "models", "rollback"));
            assertEquals(previous, awaitServedModel(serve, url, previous), "the service switched to the rolled-back model");

            ok(LauncherProcess.run(env, work, "models", "promote", Long.toString(live)));
            assertEquals(live, awaitServedModel(serve, url, live), "and back on promotion");
            assertEquals(LauncherProcess.EXIT_AFTER_SIGTERM, serve.terminate(), serve.describe());
        }
    }

    private static long servedModel(String url) throws Exception {
        HttpResponse<String> r = HTTP.send(HttpRequest.newBuilder(URI.create(url)).header("Authorization",
                "Bearer " + readKey).build(), HttpResponse.BodyHandlers.ofString());
        assertEquals(200, r.statusCode(), url + " -> " + r.body());
        return JSON.readTree(r.body()).get("model").asLong();
    }

    /** Polls until the service answers from {@code expected}; returns the last model seen when the wait ends. */
    private static long awaitServedModel(LauncherProcess serve, String url, long expected) throws Exception {
        long deadline = System.nanoTime() + SWITCH_TIMEOUT.toNanos();
        long seen = servedModel(url);
        while (seen != expected && System.nanoTime() < deadline && serve.isAlive()) {
            Thread.sleep(100);
            seen = servedModel(url);
        }
        return seen;
    }

    private static String aUserWithRatings() throws Exception {
        try (Connection c = database.dataSource().getConnection(); Statement s = c.createStatement();
                ResultSet rs = s.executeQuery("select u.external_id from users u join ratings r on r.user_idx = u.idx"
                        + " group by u.external_id order by count(*) desc, u.external_id limit 1")) {
            rs.next();
            return rs.getString(1);
        }
    }

    /**
     * Starts a train that pauses at {@code point}, checks the run's version has {@code statusThere}
     * while the live model is unchanged, kills it with SIGKILL, checks the live model again, and runs
     * the next train, which must recover and finish. Returns the killed run's version.
     */
    private static long killedAt(String point, String statusThere) throws Exception {
        long live = registry.active().orElseThrow().id();
        long killed;
        try (LauncherProcess p = LauncherProcess.start(List.of("-Dtwofold.pauseAt=" + point), env, work, "train",
                "--epochs", EPOCHS)) {
            p.awaitStderr("paused at " + point);
            ModelHeader newest = registry.list().get(0);
            killed = newest.id();
            assertEquals(statusThere, newest.status());
            assertEquals(LauncherProcess.EXIT_AFTER_SIGKILL, p.killHard());
        }
        assertEquals(live, registry.active().orElseThrow().id(), "killed at " + point + ": the live model is unchanged");

        LauncherProcess next = LauncherProcess.run(env, work, "train", "--epochs", EPOCHS, "--json");
        assertEquals(0, next.exitCode(), next.describe());
        JsonNode report = JSON.readTree(next.stdout());
        ModelHeader after = registry.find(killed).orElseThrow();
        if (statusThere.equals("training")) {
            assertEquals(killed, report.at("/recovered/0").asLong(), next.stdout());
            assertEquals("failed", after.status());
            assertEquals(ModelRegistry.ORPHAN_REASON, after.reason());
        } else {
            assertEquals(0, report.get("recovered").size(), "a finished candidate is no orphan");
            assertEquals(statusThere, after.status());
        }
        assertEquals(live, report.get("liveModelId").asLong(), "the next run judged against the untouched live model");
        assertEquals(0, count("select count(*) from models where status = 'training'"));
        return killed;
    }

    private static void ok(LauncherProcess p) throws Exception {
        assertEquals(0, p.exitCode(), p.describe());
    }

    private static long count(String sql) throws Exception {
        try (Connection c = database.dataSource().getConnection(); Statement s = c.createStatement();
                ResultSet rs = s.executeQuery(sql)) {
            rs.next();
            return rs.getLong(1);
        }
    }

    private static String checksum() throws Exception {
        try (Connection c = database.dataSource().getConnection(); Statement s = c.createStatement();
                ResultSet rs = s.executeQuery("select (select count(*) from ratings) || ':' || coalesce((select md5(string_agg("
                        + "r::text, '|' order by user_idx, item_idx)) from ratings r), '') || ' ' || (select count(*) from trust)")) {
            rs.next();
            return rs.getString(1);
        }
    }
}
