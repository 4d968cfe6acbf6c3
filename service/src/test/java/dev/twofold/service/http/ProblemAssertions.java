package dev.twofold.service.http;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import dev.twofold.service.testing.ApiClient;
import java.net.http.HttpResponse;

/** Checks that a response is an RFC 9457 problem of the expected status and type. */
final class ProblemAssertions {

    private ProblemAssertions() {
    }

    /** Asserts the problem and returns its {@code detail}. */
    static String assertProblem(HttpResponse<String> response, int status, ProblemType type) {
        return assertProblem(response, status, type.uri());
    }

    static String assertProblem(HttpResponse<String> response, int status, String type) {
        assertEquals(status, response.statusCode(), response.body());
        assertEquals("application/problem+json",
                response.headers().firstValue("Content-Type").orElse("").split(";")[0].trim(), response.body());
        JsonNode problem = ApiClient.json(response);
        assertEquals(type, problem.path("type").asText(), response.body());
        assertEquals(status, problem.path("status").asInt(), response.body());
        assertTrue(problem.path("title").isTextual() && !problem.path("title").asText().isBlank(), response.body());
        assertTrue(problem.path("detail").isTextual() && !problem.path("detail").asText().isBlank(), response.body());
        return problem.path("detail").asText();
    }
}
