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
import dev.twofold.service.testing.KitchenModel;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Statement;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** POST /v1/ratings and /v1/trust: accepted only once committed, refused whole with a reason per row. */
class WriteApiTest {

    @TempDir
    static Path dir;
    private static Database db;
    private static Service service;
    private static ApiClient api;

    @BeforeAll
    static void start() {
        db = TestDatabases.fresh();
        KitchenDatabase.importRatings(db, dir);
        KitchenDatabase.publishModel(db);
        service = new Service(new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(5), Duration.ofHours(1)),
                AccessPolicy.OPEN, db);
        api = new ApiClient(service.start());
    }

    @AfterAll
    static void stop() {
        service.close();
        db.close();
    }

    @Test
    void a_batch_with_bad_rows_is_refused_whole_with_one_line_per_row_problem() throws SQLException {
        long ratingsBefore = count("ratings");
        long usersBefore = count("users");
        HttpResponse<String> refused = api.postJson("/v1/ratings", """
                [{"user": "ana", "item": "pie", "rating": 4},
                 {"user": "ana", "item": "cake", "rating": 7},
                 {"user": "ben", "rating": 3},
                 {"user": "%s", "item": "pie", "rating": 3},
                 "not a row",
                 {"user": "cy", "item": "pie", "stars": 3, "rating": 2},
                 {"user": "cy", "item": "soup", "rating": "4"},
                 {"user": "dee", "item": "soup", "rating": 4, "time": "yesterday"},
                 {"user": "new-cook", "item": "new-recipe", "rating": 2.5, "time": "2026-05-01T18:30:00Z"}]
                """.formatted("x".repeat(129)));
        assertProblem(refused, 400, ProblemType.INVALID_BODY);
        JsonNode problem = ApiClient.json(refused);
        List<String> errors = new ArrayList<>();
        problem.path("errors").forEach(e -> errors.add(e.asText()));
        assertEquals(7, errors.size(), errors.toString());
        assertTrue(errors.get(0).startsWith("[1]: ") && errors.get(0).contains("7") && errors.get(0).contains("1..5"),
                errors.get(0));
        assertTrue(errors.get(1).startsWith("[2]: ") && errors.get(1).contains("item is missing"), errors.get(1));
        assertTrue(errors.get(2).startsWith("[3]: ") && errors.get(2).contains("129"), errors.get(2));
        assertTrue(errors.get(3).startsWith("[4]: ") && errors.get(3).contains("not an object"), errors.get(3));
        assertTrue(errors.get(4).startsWith("[5]: ") && errors.get(4).contains("stars"), errors.get(4));
        assertTrue(errors.get(5).startsWith("[6]: ") && errors.get(5).contains("rating must be a number"),
                errors.get(5));
        assertTrue(errors.get(6).startsWith("[7]: ") && errors.get(6).contains("yesterday"), errors.get(6));
        assertTrue(problem.path("detail").asText().contains("7 problems"), problem.path("detail").asText());
        assertEquals(ratingsBefore, count("ratings"), "nothing written");
        assertEquals(usersBefore, count("users"), "no ids created");
    }

    @Test
    void trust_rows_are_checked_like_the_trust_file() {
        HttpResponse<String> refused = api.postJson("/v1/trust", """
                [{"truster": "ana", "trustee": "ana"},
                 {"truster": "ana", "trustee": "ben", "weight": 0},
                 {"truster": "ana", "trustee": "ben", "weight": 1.5},
                 {"truster": "ana"},
                 {"truster": "ana", "trustee": "ben", "weight": 0.5}]
                """);
        assertProblem(refused, 400, ProblemType.INVALID_BODY);
        List<String> errors = new ArrayList<>();
        ApiClient.json(refused).path("errors").forEach(e -> errors.add(e.asText()));
        assertEquals(4, errors.size(), errors.toString());
        assertTrue(errors.get(0).startsWith("[0]: ") && errors.get(0).contains("self-trust"), errors.get(0));
        assertTrue(errors.get(1).startsWith("[1]: "), errors.get(1));
        assertTrue(errors.get(2).startsWith("[2]: "), errors.get(2));
        assertTrue(errors.get(3).startsWith("[3]: ") && errors.get(3).contains("trustee is missing"), errors.get(3));
    }

    @Test
    void an_accepted_batch_is_committed_and_counted() throws SQLException {
        long before = count("trust");
        HttpResponse<String> accepted = api.postJson("/v1/trust",
                "[{\"truster\": \"eve\", \"trustee\": \"ana\", \"weight\": 0.75}, {\"truster\": \"first-timer\","
                        + " \"trustee\": \"ben\"}]");
        assertEquals(202, accepted.statusCode(), accepted.body());
        JsonNode body = ApiClient.json(accepted);
        assertEquals(2, body.path("received").asInt());
        assertEquals(2, body.path("written").asInt());
        assertEquals(1, body.path("newUsers").asInt());
        assertEquals(2, body.path("foldedUsers").asInt());
        assertEquals(before + 2, count("trust"));
    }

    @Test
    void bodies_of_the_wrong_shape_size_or_type_are_refused() {
        assertProblem(api.postJson("/v1/ratings", "[]"), 400, ProblemType.INVALID_BODY);
        assertProblem(api.postJson("/v1/ratings", "{\"user\": \"ana\"}"), 400, ProblemType.INVALID_BODY);
        assertProblem(api.postJson("/v1/trust", "[{\"truster\": "), 400, ProblemType.MALFORMED_JSON);
        assertProblem(api.post("/v1/ratings", "text/csv", HttpRequest.BodyPublishers.ofString("user,item,rating")), 415,
                ProblemType.UNSUPPORTED_MEDIA_TYPE);
        StringBuilder tooMany = new StringBuilder("[");
        for (int i = 0; i <= Limits.MAX_BATCH_ROWS; i++) {
            tooMany.append(i == 0 ? "" : ",").append("{\"truster\":\"a").append(i).append("\",\"trustee\":\"b\"}");
        }
        assertProblem(api.postJson("/v1/trust", tooMany.append(']').toString()), 413, ProblemType.BATCH_TOO_LARGE);
    }

    @Test
    void without_a_database_the_write_and_model_routes_say_so() {
        try (Service bare = new Service(new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(5),
                Duration.ofSeconds(1)))) {
            bare.install(KitchenModel.build());
            ApiClient plain = new ApiClient(bare.start());
            assertProblem(plain.postJson("/v1/ratings", "[{\"user\": \"ana\", \"item\": \"pie\", \"rating\": 4}]"), 503,
                    ProblemType.DATABASE_UNAVAILABLE);
            assertProblem(plain.get("/v1/models"), 503, ProblemType.DATABASE_UNAVAILABLE);
        }
    }

    private static long count(String table) throws SQLException {
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement();
                ResultSet rs = s.executeQuery("select count(*) from " + table)) {
            rs.next();
            return rs.getLong(1);
        }
    }
}
