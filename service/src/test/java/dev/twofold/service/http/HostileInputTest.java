package dev.twofold.service.http;

import static dev.twofold.service.http.ProblemAssertions.assertProblem;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.service.Service;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.testing.ApiClient;
import dev.twofold.service.testing.KitchenDatabase;
import dev.twofold.service.testing.RawHttp;
import java.net.URLEncoder;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.PreparedStatement;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Statement;
import java.time.Duration;
import java.util.List;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The hostile inputs of the contract, one by one, against a real server and PostgreSQL: limits,
 * broken and mistyped JSON, numbers that are not finite, ids an attacker picks. Everything is
 * either refused with a problem that says what and where, or stored and served as plain data.
 */
class HostileInputTest {

    /** What an attacker would like the database to run; to Twofold it is only an id. */
    private static final String SQL_ID = "x'); drop table ratings; --";
    private static final String TRAVERSAL_ID = "../../etc/passwd";

    @TempDir
    static Path dir;
    private static Database db;
    private static Service service;
    private static ApiClient api;
    private static int port;

    @BeforeAll
    static void start() {
        db = TestDatabases.fresh();
        KitchenDatabase.importRatings(db, dir);
        KitchenDatabase.publishModel(db);
        service = new Service(new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(5), Duration.ofHours(1)),
                AccessPolicy.OPEN, db);
        port = service.start();
        api = new ApiClient(port);
    }

    @AfterAll
    static void stop() {
        service.close();
        db.close();
    }

    @Test
    void sql_looking_and_path_traversal_ids_are_stored_and_served_as_plain_data() throws SQLException {
        HttpResponse<String> written = api.postJson("/v1/ratings", "[{\"user\": " + json(SQL_ID) + ", \"item\": "
                + json(TRAVERSAL_ID) + ", \"rating\": 4}, {\"user\": " + json(TRAVERSAL_ID) + ", \"item\": \"soup\", \"rating\": 2}]");
        assertEquals(202, written.statusCode(), written.body());
        assertEquals(new java.util.TreeSet<>(List.of(SQL_ID + "|" + TRAVERSAL_ID + "|4", TRAVERSAL_ID + "|soup|2")),
                new java.util.TreeSet<>(stored(SQL_ID, TRAVERSAL_ID)));
        assertEquals(202, api.postJson("/v1/trust", "[{\"truster\": " + json(TRAVERSAL_ID) + ", \"trustee\": " + json(SQL_ID)
                + "}]").statusCode());

        JsonNode recs = ApiClient.json(api.get("/v1/users/" + path(SQL_ID) + "/recommendations?exclude=" + path(TRAVERSAL_ID)));
        assertEquals(SQL_ID, recs.path("user").asText());
        JsonNode traversal = ApiClient.json(api.get("/v1/users/" + path(TRAVERSAL_ID) + "/recommendations"));
        assertEquals(TRAVERSAL_ID, traversal.path("user").asText());
        for (JsonNode item : traversal.path("items")) {
            assertTrue(!item.path("item").asText().equals("soup"), "the rated item stays out: " + traversal);
        }
        JsonNode predicted = ApiClient.json(api.postJson("/v1/predictions", "{\"pairs\": [{\"user\": " + json(SQL_ID)
                + ", \"item\": " + json(TRAVERSAL_ID) + "}]}"));
        assertEquals(SQL_ID, predicted.path("predictions").get(0).path("user").asText());
        assertEquals(8, count("select count(*) from pg_tables where schemaname = 'public' and tablename in ('users', 'items',"
                + " 'ratings', 'trust', 'models', 'active_model', 'model_user_factors', 'model_item_factors')"), "every table is there");
    }

    @Test
    void raw_dot_segments_and_bad_escapes_in_the_path_never_reach_another_route() {
        for (String target : List.of("/v1/users/../models", "/v1/users/%2e%2e/models", "/v1/users/..%2F..%2Fv1%2Fmodels",
                "/v1/items/%2e%2e%2f%2e%2e%2fmodels/similar")) {
            RawHttp.Response response = RawHttp.exchange(port, "GET", target.getBytes(StandardCharsets.US_ASCII), null, null);
            // 405: one encoded segment lands on /v1/users/{user}, which only answers DELETE (erasure)
            assertTrue(response.status() == 404 || response.status() == 400 || response.status() == 200
                    || response.status() == 405, target + " -> " + response.status());
            assertTrue(!response.bodyText().contains("\"models\""), target + " listed the models: " + response.bodyText());
        }
        for (String target : List.of("/v1/users/%ff%fe/recommendations", "/v1/users/%ed%a0%80/recommendations",
                "/v1/users/a%00b/recommendations", "/v1/users/%zz/recommendations")) {
            RawHttp.Response response = RawHttp.exchange(port, "GET", target.getBytes(StandardCharsets.US_ASCII), null, null);
            assertEquals(400, response.status(), target + ": " + response.bodyText());
            assertTrue(response.header("Content-Type").startsWith("application/problem+json"), target);
        }
    }

    @Test
    void half_a_surrogate_pair_in_an_id_is_refused_where_it_would_otherwise_become_another_user() throws SQLException {
        long users = count("select count(*) from users");
        String detail = assertProblem(api.postJson("/v1/ratings", "[{\"user\": \"ana\\ud800\", \"item\": \"soup\", \"rating\": 4}]"),
                400, ProblemType.INVALID_BODY);
        assertTrue(detail.contains("nothing was written"), detail);
        assertEquals(users, count("select count(*) from users"));
        assertEquals(0, count("select count(*) from users where external_id = 'ana?'"), "no 'ana?' was made of it");
        detail = assertProblem(api.postJson("/v1/predictions", "{\"pairs\": [{\"user\": \"\\udc00\", \"item\": \"soup\"}]}"),
                400, ProblemType.INVALID_BODY);
        assertTrue(detail.startsWith("/pairs/0/user") && detail.contains("surrogate"), detail);
    }

    @Test
    void ids_read_obey_the_rules_of_ids_written() {
        for (String id : List.of(" ana", "ana ", "a\u0001b", "\u00a0ana")) {
            String detail = assertProblem(api.get("/v1/users/" + path(id) + "/recommendations"), 400, ProblemType.INVALID_PARAMETER);
            assertTrue(detail.startsWith("user "), detail);
        }
        String detail = assertProblem(api.get("/v1/users/ana/recommendations?exclude=soup," + path("\tpie")), 400,
                ProblemType.INVALID_PARAMETER);
        assertTrue(detail.contains("exclude id #2"), detail);
        String emoji = "\uD83C\uDF72".repeat(128);
        // 128 characters of two UTF-16 units each are a valid id: only unknown (404), not refused (400)
        assertProblem(api.get("/v1/items/" + path(emoji) + "/similar"), 404, ProblemType.NOT_FOUND);
        assertProblem(api.get("/v1/items/" + path(emoji + "x") + "/similar"), 400, ProblemType.INVALID_PARAMETER);
    }

    @Test
    void numbers_that_are_not_finite_or_not_numbers_are_refused_with_where() {
        String detail = assertProblem(api.postJson("/v1/ratings", "[{\"user\": \"ana\", \"item\": \"soup\", \"rating\": NaN}]"),
                400, ProblemType.MALFORMED_JSON);
        assertTrue(detail.contains("line 1, column"), detail);
        assertProblem(api.postJson("/v1/ratings", "[{\"user\": \"ana\", \"item\": \"soup\", \"rating\": -Infinity}]"), 400,
                ProblemType.MALFORMED_JSON);
        HttpResponse<String> huge = api.postJson("/v1/ratings", "[{\"user\": \"ana\", \"item\": \"soup\", \"rating\": 1e400},"
                + " {\"user\": \"ana\", \"item\": \"soup\", \"rating\": true}, {\"user\": 7, \"item\": \"soup\", \"rating\": 3}]");
        assertProblem(huge, 400, ProblemType.INVALID_BODY);
        List<String> errors = errors(huge);
        assertEquals(3, errors.size(), errors.toString());
        assertTrue(errors.get(0).startsWith("[0]: rating") && errors.get(0).contains("not a finite number"), errors.get(0));
        assertTrue(errors.get(1).startsWith("[1]: rating must be a number, not a boolean"), errors.get(1));
        assertTrue(errors.get(2).startsWith("[2]: user must be a string, not a number"), errors.get(2));
        assertProblem(api.postJson("/v1/trust", "[{\"truster\": \"ana\", \"trustee\": \"ben\", \"weight\": 1e-400}]"), 400,
                ProblemType.INVALID_BODY);
        assertProblem(api.postJson("/v1/ratings", "[{\"user\": \"ana\", \"item\": \"soup\", \"rating\": 1" + "0".repeat(1500)
                + "}]"), 400, ProblemType.MALFORMED_JSON);
    }

    @Test
    void huge_counts_and_absurd_query_strings_are_refused_without_a_5xx() {
        for (String count : List.of("1001", "2147483648", "99999999999999999999", "-1", "1e3", "0x10", "%EF%BC%91")) {
            String detail = assertProblem(api.get("/v1/users/ana/recommendations?count=" + count), 400, ProblemType.INVALID_PARAMETER);
            assertTrue(detail.contains("1..1000"), detail);
        }
        HttpResponse<String> longQuery = api.get("/v1/users/ana/recommendations?exclude=" + "soup,".repeat(4000) + "pie");
        assertTrue(longQuery.statusCode() == 414 || longQuery.statusCode() == 431, longQuery.statusCode() + " " + longQuery.body());
        assertTrue(longQuery.headers().firstValue("Content-Type").orElse("").startsWith("application/problem+json"));
    }

    @Test
    void a_write_body_over_the_limits_is_a_413_and_writes_nothing() throws SQLException {
        long ratings = count("select count(*) from ratings");
        StringBuilder batch = new StringBuilder("[");
        for (int i = 0; i <= Limits.MAX_BATCH_ROWS; i++) {
            batch.append(i == 0 ? "" : ",").append("{\"user\":\"u").append(i).append("\",\"item\":\"soup\",\"rating\":3}");
        }
        assertProblem(api.postJson("/v1/ratings", batch.append(']').toString()), 413, ProblemType.BATCH_TOO_LARGE);
        String big = "[{\"user\":\"ana\",\"item\":\"soup\",\"rating\":3,\"time\":\"" + "1".repeat(Limits.MAX_BODY_BYTES) + "\"}]";
        assertProblem(api.postJson("/v1/trust", big), 413, ProblemType.BODY_TOO_LARGE);
        assertEquals(ratings, count("select count(*) from ratings"));
    }

    @Test
    void every_client_sending_an_oversized_body_gets_its_413_not_a_reset() {
        // Answering while the client still sends made its TCP stack reset the connection before
        // the answer was read in about 2 % of tries (6 of 300 before the server drained the rest).
        String big = "[{\"user\":\"ana\",\"item\":\"soup\",\"time\":\"" + "1".repeat(Limits.MAX_BODY_BYTES) + "\"}]";
        for (int i = 0; i < 200; i++) {
            assertEquals(413, api.postJson("/v1/predictions", big).statusCode(), "request " + i);
        }
    }

    @Test
    void problem_details_quote_client_values_cut_between_characters() {
        String field = "\uD83C\uDF72".repeat(60);
        String detail = assertProblem(api.postJson("/v1/predictions", "{\"" + field + "\": 1}"), 400, ProblemType.INVALID_BODY);
        assertTrue(detail.contains("\uD83C\uDF72".repeat(40) + "..."), detail);
        assertEquals(detail, new String(detail.getBytes(StandardCharsets.UTF_8), StandardCharsets.UTF_8), "no half character");
    }

    private static List<String> errors(HttpResponse<String> response) {
        List<String> out = new java.util.ArrayList<>();
        ApiClient.json(response).path("errors").forEach(e -> out.add(e.asText()));
        return out;
    }

    /** "user|item|rating" of the stored ratings of these users. */
    private static List<String> stored(String... users) throws SQLException {
        List<String> out = new java.util.ArrayList<>();
        try (Connection c = db.dataSource().getConnection(); PreparedStatement ps = c.prepareStatement(
                "select u.external_id || '|' || i.external_id || '|' || r.rating from ratings r join users u on u.idx = r.user_idx"
                        + " join items i on i.idx = r.item_idx where u.external_id = any (?)")) {
            ps.setArray(1, c.createArrayOf("text", users));
            try (ResultSet rs = ps.executeQuery()) {
                while (rs.next()) {
                    out.add(rs.getString(1));
                }
            }
        }
        return out;
    }

    private static long count(String sql) throws SQLException {
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement(); ResultSet rs = s.executeQuery(sql)) {
            rs.next();
            return rs.getLong(1);
        }
    }

    private static String json(String text) {
        return "\"" + text.replace("\\", "\\\\").replace("\"", "\\\"") + "\"";
    }

    private static String path(String id) {
        return URLEncoder.encode(id, StandardCharsets.UTF_8).replace("+", "%20");
    }
}
