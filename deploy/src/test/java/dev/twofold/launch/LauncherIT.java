package dev.twofold.launch;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.twofold.db.connect.Database;
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
import java.util.HashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The command line as a user runs it: the shaded jar in its own process, on a real PostgreSQL,
 * with the service answering over real HTTP.
 */
class LauncherIT {

    /** Commands of the contract (PRODUCT.md, "Launcher"). */
    static final List<String> CONTRACT_COMMANDS = List.of("serve", "import", "train", "models", "sweep", "keys",
            "users", "demo-data", "demo");
    static final int DEMO_USERS = 400;
    static final int DEMO_ITEMS = 150;
    static final double SCALE_MIN = 1;
    static final double SCALE_MAX = 5;

    static Database database;
    static Map<String, String> env;
    /** The read key the serve test created with `twofold keys create`. */
    static String readKey;
    static final HttpClient HTTP = HttpClient.newHttpClient();
    static final ObjectMapper JSON = new ObjectMapper();

    @TempDir
    static Path work;

    @BeforeAll
    static void openDatabase() {
        database = TestDatabases.fresh();
        env = TestDatabases.environment(database);
    }

    @AfterAll
    static void closeDatabase() {
        database.close();
    }

    @Test
    void help_lists_every_command_of_the_contract_and_each_has_its_own_help() throws Exception {
        LauncherProcess help = LauncherProcess.run(env, work, "--help");
        assertEquals(0, help.exitCode(), help.describe());
        for (String command : CONTRACT_COMMANDS) {
            assertTrue(help.stdout().contains("  " + command + " "), "--help lists " + command + "\n" + help.stdout());
            LauncherProcess own = LauncherProcess.run(env, work, command, "--help");
            assertEquals(0, own.exitCode(), command + " --help\n" + own.describe());
        }
    }

    @Test
    void roles_prints_its_sql_and_grants_the_two_roles_from_the_jar() throws Exception {
        String service = "tf_it_service_" + ProcessHandle.current().pid();
        String trainer = "tf_it_trainer_" + ProcessHandle.current().pid();
        LauncherProcess print = LauncherProcess.run(env, work, "roles", "--print", "--service-role", service, "--trainer-role", trainer);
        assertEquals(0, print.exitCode(), print.describe());
        assertTrue(print.stdout().contains("grant select, insert, update, delete on ratings, trust to " + service), print.stdout());
        assertEquals(0, count("pg_roles where rolname = '" + service + "'"), "--print changes nothing");

        LauncherProcess roles = LauncherProcess.run(env, work, "roles", "--service-role", service, "--trainer-role", trainer);
        assertEquals(0, roles.exitCode(), roles.describe());
        try {
            assertEquals(1, count("pg_roles where rolname = '" + service + "' and not rolcanlogin"));
            assertEquals(1, count("pg_roles where rolname = '" + trainer + "' and not rolcanlogin"));
            assertEquals(1, count("(select has_table_privilege('" + service + "', 'ratings', 'insert')"
                    + " and not has_table_privilege('" + service + "', 'model_item_factors', 'insert')"
                    + " and has_table_privilege('" + trainer + "', 'model_item_factors', 'insert') as ok) granted where ok"));
            LauncherProcess bad = LauncherProcess.run(env, work, "roles", "--service-role", "x; drop table ratings");
            assertEquals(65, bad.exitCode(), bad.describe());
        } finally {
            try (Connection c = database.dataSource().getConnection(); Statement s = c.createStatement()) {
                s.execute("drop owned by " + service + ", " + trainer);
                s.execute("drop role " + service);
                s.execute("drop role " + trainer);
            }
        }
    }

    @Test
    void an_unknown_option_is_a_usage_error() throws Exception {
        LauncherProcess p = LauncherProcess.run(env, work, "train", "--no-such-option");
        assertEquals(2, p.exitCode(), p.describe());
        assertTrue(p.stderr().contains("--no-such-option"), p.describe());
    }

    @Test
    void demo_data_import_train_and_serve_answer_recommendations_over_http() throws Exception {
        Path data = Files.createDirectories(work.resolve("community"));
        LauncherProcess generated = LauncherProcess.run(env, work, "demo-data", "--out", data.toString(),
                "--users", Integer.toString(DEMO_USERS), "--items", Integer.toString(DEMO_ITEMS));
        assertEquals(0, generated.exitCode(), generated.describe());

        LauncherProcess imported = LauncherProcess.run(env, work, "import", "--ratings",
                data.resolve("ratings.csv").toString(), "--trust", data.resolve("trust.csv").toString());
        assertEquals(0, imported.exitCode(), imported.describe());

        LauncherProcess trained = LauncherProcess.run(env, work, "train", "--epochs", "8", "--rank", "8",
                "--lambda", "0.05", "--json");
        assertEquals(0, trained.exitCode(), trained.describe());
        // standard output is the report alone, one JSON document a pipeline can read; logs go to stderr
        JsonNode report = JSON.readTree(trained.stdout());
        assertEquals("promoted", report.get("outcome").asText(), trained.describe());
        long activeId = new ModelRegistry(database).active().orElseThrow().id();
        assertEquals(activeId, report.get("modelId").asLong());

        LauncherProcess created = LauncherProcess.run(env, work, "keys", "create", "--role", "read", "--name",
                "launcher-it");
        assertEquals(0, created.exitCode(), created.describe());
        String key = created.stdout().strip();
        assertTrue(key.startsWith("tf_") && !created.stderr().contains(key), "the key is printed once, on stdout");

        int port = LauncherProcess.freePort();
        try (LauncherProcess serve = LauncherProcess.start(
                LauncherProcess.env(env, "TWOFOLD_HTTP_PORT", Integer.toString(port)), work, "serve")) {
            String base = "http://127.0.0.1:" + port;
            serve.awaitReady(HTTP, base + "/health/ready");
            HttpResponse<String> anonymous = HTTP.send(HttpRequest.newBuilder(URI.create(base
                    + "/v1/users/never-seen-cook/recommendations")).build(), HttpResponse.BodyHandlers.ofString());
            assertEquals(401, anonymous.statusCode(), "serve checks API keys by default: " + anonymous.body());
            assertTrue(anonymous.headers().firstValue("WWW-Authenticate").orElse("").startsWith("Bearer"));
            readKey = key;

            String user = mostActiveUser(data.resolve("ratings.csv"));
            Set<String> rated = ratedItems(user);
            JsonNode body = getJson(base + "/v1/users/" + user + "/recommendations?count=20");
            assertEquals(user, body.get("user").asText());
            assertEquals(activeId, body.get("model").asLong(), "the service serves the registry's active model");
            assertEquals("model", body.get("strategy").asText());
            JsonNode items = body.get("items");
            assertEquals(20, items.size());
            double previous = Double.POSITIVE_INFINITY;
            for (JsonNode item : items) {
                assertFalse(rated.contains(item.get("item").asText()), "rated item returned: " + item);
                double score = item.get("score").asDouble();
                assertTrue(score >= SCALE_MIN && score <= SCALE_MAX, "score on the scale: " + item);
                assertTrue(score <= previous, "best first");
                previous = score;
            }

            JsonNode stranger = getJson(base + "/v1/users/never-seen-cook/recommendations?count=5");
            assertEquals("popular", stranger.get("strategy").asText());
            assertEquals(5, stranger.get("items").size());

            assertEquals(LauncherProcess.EXIT_AFTER_SIGTERM, serve.terminate(), serve.describe());
            assertTrue(serve.stderr().contains("stopped"), "SIGTERM is a clean stop\n" + serve.describe());
        }
    }

    @Test
    void a_malformed_file_is_refused_with_its_line_exit_65_and_nothing_written() throws Exception {
        Path bad = work.resolve("bad-ratings.csv");
        StringBuilder csv = new StringBuilder("user,item,rating\n");
        int badLine = 0;
        for (int row = 0; row < 3000; row++) {
            if (row == 1234) {
                csv.append("cook-x,recipe-y,7.5\n");
                badLine = row + 2; // header is line 1
            } else {
                csv.append("cook-").append(row % 97).append(",recipe-").append(row).append(",4\n");
            }
        }
        Files.writeString(bad, csv, StandardCharsets.UTF_8);
        long before = count("ratings");

        LauncherProcess p = LauncherProcess.run(env, work, "import", "--ratings", bad.toString());
        assertEquals(65, p.exitCode(), p.describe());
        assertTrue(p.stderr().contains("bad-ratings.csv:" + badLine + ":"), p.describe());
        assertEquals(before, count("ratings"), "nothing written");
    }

    @Test
    void serve_refuses_open_access_on_an_address_other_machines_can_reach() throws Exception {
        LauncherProcess p = LauncherProcess.run(LauncherProcess.env(env, "TWOFOLD_ACCESS", "open",
                "TWOFOLD_HTTP_HOST", "0.0.0.0", "TWOFOLD_HTTP_PORT", "0"), work, "serve");
        assertEquals(2, p.exitCode(), p.describe());
        assertTrue(p.stderr().contains("TWOFOLD_ACCESS=open") && p.stderr().contains("127.0.0.1"), p.describe());
    }

    private static JsonNode getJson(String url) throws Exception {
        HttpResponse<String> r = HTTP.send(HttpRequest.newBuilder(URI.create(url)).header("Authorization",
                "Bearer " + readKey).build(), HttpResponse.BodyHandlers.ofString());
        assertEquals(200, r.statusCode(), url + " -> " + r.body());
        return JSON.readTree(r.body());
    }

    private static String mostActiveUser(Path ratings) throws Exception {
        Map<String, Integer> counts = new java.util.HashMap<>();
        for (String line : Files.readAllLines(ratings).subList(1, Files.readAllLines(ratings).size())) {
            counts.merge(line.substring(0, line.indexOf(',')), 1, Integer::sum);
        }
        return counts.entrySet().stream().max(Map.Entry.comparingByValue()).orElseThrow().getKey();
    }

    private static Set<String> ratedItems(String user) throws Exception {
        Set<String> items = new HashSet<>();
        try (Connection c = database.dataSource().getConnection();
                var ps = c.prepareStatement("select i.external_id from ratings r join users u on u.idx = r.user_idx "
                        + "join items i on i.idx = r.item_idx where u.external_id = ?")) {
            ps.setString(1, user);
            try (ResultSet rs = ps.executeQuery()) {
                while (rs.next()) {
                    items.add(rs.getString(1));
                }
            }
        }
        assertFalse(items.isEmpty());
        return items;
    }

    private static long count(String table) throws Exception {
        try (Connection c = database.dataSource().getConnection(); Statement s = c.createStatement();
                ResultSet rs = s.executeQuery("select count(*) from " + table)) {
            rs.next();
            return rs.getLong(1);
        }
    }
}
