package dev.twofold.service.http;

import static dev.twofold.service.http.ProblemAssertions.assertProblem;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import dev.twofold.db.BadInputException;
import dev.twofold.db.DatabaseUnavailableException;
import dev.twofold.service.testing.ApiClient;
import io.javalin.Javalin;
import io.javalin.http.HttpResponseException;
import java.net.http.HttpResponse;
import java.util.List;
import java.util.concurrent.CopyOnWriteArrayList;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/** The exception-to-problem mapping on a real server, with routes that throw each kind of failure. */
class ProblemsTest {

    private static final int RETRY_AFTER_SECONDS = 7;

    private static final List<String> LOST = new CopyOnWriteArrayList<>();
    private static Javalin app;
    private static ApiClient api;

    @BeforeAll
    static void start() {
        app = Javalin.create(config -> {
            config.startup.showJavalinBanner = false;
            new Problems(RETRY_AFTER_SECONDS, LOST::add).register(config.routes);
            config.routes.get("/bad-rows", ctx -> {
                throw new BadInputException("2 of 3 rows are invalid; nothing was written",
                        List.of("[0]: rating 7 is outside the scale 1..5", "[2]: user is missing"), 2);
            });
            config.routes.get("/database-down", ctx -> {
                throw new DatabaseUnavailableException("PostgreSQL at 127.0.0.1:1 refused the connection", null);
            });
            config.routes.get("/bug", ctx -> {
                throw new IllegalStateException("secret internal state");
            });
            config.routes.get("/slow-down", ctx -> {
                throw new HttpResponseException(429, "at most 10 requests per second");
            });
        }).start("127.0.0.1", 0);
        api = new ApiClient(app.port());
    }

    @AfterAll
    static void stop() {
        app.stop();
    }

    @Test
    void refused_batch_rows_are_a_400_listing_each_problem() {
        HttpResponse<String> response = api.get("/bad-rows");
        String detail = assertProblem(response, 400, ProblemType.INVALID_BODY);
        assertTrue(detail.contains("nothing was written"), detail);
        JsonNode errors = ApiClient.json(response).path("errors");
        assertEquals(2, errors.size());
        assertEquals("[2]: user is missing", errors.get(1).asText());
    }

    @Test
    void an_unreachable_database_is_a_503_with_retry_after_and_is_reported_lost() {
        HttpResponse<String> response = api.get("/database-down");
        assertProblem(response, 503, ProblemType.DATABASE_UNAVAILABLE);
        assertEquals(Integer.toString(RETRY_AFTER_SECONDS), response.headers().firstValue("Retry-After").orElseThrow());
        assertTrue(LOST.contains("PostgreSQL at 127.0.0.1:1 refused the connection"), LOST.toString());
    }

    @Test
    void an_unexpected_failure_is_a_500_that_does_not_leak_its_message() {
        HttpResponse<String> response = api.get("/bug");
        String detail = assertProblem(response, 500, ProblemType.INTERNAL);
        assertFalse(response.body().contains("secret"), response.body());
        assertTrue(detail.contains("service log"), detail);
        assertEquals("/bug", ApiClient.json(response).path("instance").asText());
    }

    @Test
    void a_bare_http_status_is_an_about_blank_problem_titled_by_its_reason_phrase() {
        HttpResponse<String> response = api.get("/slow-down");
        assertProblem(response, 429, Problems.ABOUT_BLANK);
        // Reason phrase of 429: RFC 6585 section 4.
        assertEquals("Too Many Requests", ApiClient.json(response).path("title").asText());
        assertEquals("at most 10 requests per second", ApiClient.json(response).path("detail").asText());
    }
}
