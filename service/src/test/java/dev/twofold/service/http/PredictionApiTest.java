package dev.twofold.service.http;

import static dev.twofold.service.http.ProblemAssertions.assertProblem;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import dev.twofold.service.Service;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.testing.ApiClient;
import dev.twofold.service.testing.KitchenModel;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.util.List;
import java.util.concurrent.Flow;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

class PredictionApiTest {

    private static final double SCORE_TOLERANCE = 1e-5;

    private static Service service;
    private static ApiClient api;

    @BeforeAll
    static void start() {
        service = new Service(new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(5), Duration.ofSeconds(1)));
        service.install(KitchenModel.build());
        api = new ApiClient(service.start());
    }

    @AfterAll
    static void stop() {
        service.close();
    }

    @Test
    void each_pair_gets_the_clamped_formula_in_request_order() {
        HttpResponse<String> response = api.postJson("/v1/predictions", """
                {"pairs": [
                  {"user": "cy", "item": "cake"},
                  {"user": "ana", "item": "salad"},
                  {"item": "stew", "user": "ben"},
                  {"user": "zoe", "item": "cake"},
                  {"user": "dee", "item": "soup"}
                ]}""");
        assertEquals(200, response.statusCode(), response.body());
        JsonNode body = ApiClient.json(response);
        assertEquals(KitchenModel.MODEL_ID, body.path("model").asLong());
        JsonNode predictions = body.path("predictions");
        assertEquals(5, predictions.size());
        int[][] expected = {{2, 1}, {0, 3}, {1, 4}, {-1, 1}, {-1, 0}};
        String[] users = {"cy", "ana", "ben", "zoe", "dee"};
        for (int j = 0; j < expected.length; j++) {
            JsonNode p = predictions.get(j);
            assertEquals(users[j], p.path("user").asText());
            assertEquals(KitchenModel.ITEM_IDS[expected[j][1]], p.path("item").asText());
            double want = KitchenModel.clamp(KitchenModel.rawPrediction(expected[j][0], expected[j][1]));
            assertEquals(want, p.path("score").asDouble(), SCORE_TOLERANCE, "pair " + j);
            assertFalse(p.has("reason"));
        }
        assertEquals(KitchenModel.SCALE_MAX, predictions.get(0).path("score").asDouble(), "6.35 clamped to 5");
        assertEquals(KitchenModel.MU + KitchenModel.B_I[1], predictions.get(3).path("score").asDouble(),
                SCORE_TOLERANCE, "unknown user: mean plus item bias");
    }

    @Test
    void an_item_the_model_cannot_score_gets_a_null_score_and_a_reason() {
        JsonNode predictions = ApiClient.json(api.postJson("/v1/predictions", """
                {"pairs": [{"user": "cy", "item": "tart"}, {"user": "cy", "item": "jam"},
                           {"user": "cy", "item": "nowhere"}, {"user": "cy", "item": "soup"}]}"""))
                .path("predictions");
        for (int j = 0; j < 3; j++) {
            JsonNode p = predictions.get(j);
            assertTrue(p.has("score") && p.path("score").isNull(), p.toString());
            assertTrue(p.path("reason").asText().contains("not in model " + KitchenModel.MODEL_ID), p.toString());
        }
        assertTrue(predictions.get(3).path("score").isNumber());
    }

    @Test
    void an_empty_batch_gets_an_empty_answer() {
        JsonNode body = ApiClient.json(api.postJson("/v1/predictions", "{\"pairs\": []}"));
        assertEquals(0, body.path("predictions").size());
    }

    @Test
    void malformed_json_is_a_400_saying_where() {
        String detail = assertProblem(api.postJson("/v1/predictions", "{\"pairs\": [\n  {\"user\": \"cy\" \"item\": 1}]}"),
                400, ProblemType.MALFORMED_JSON);
        assertTrue(detail.contains("line 2, column"), detail);
        assertProblem(api.postJson("/v1/predictions", "{\"pairs\": [] } trailing"), 400, ProblemType.MALFORMED_JSON);
        assertProblem(api.postJson("/v1/predictions", ""), 400, ProblemType.INVALID_BODY);
        assertProblem(api.postJson("/v1/predictions", "{\"pairs\": [], \"pairs\": []}"), 400,
                ProblemType.MALFORMED_JSON);
    }

    @Test
    void a_body_of_the_wrong_shape_is_a_400_with_a_json_pointer() {
        record Case(String body, String pointer) {
        }
        List<Case> cases = List.of(
                new Case("[]", "JSON object"),
                new Case("{}", "/pairs is missing"),
                new Case("{\"pairs\": {}}", "/pairs must be an array"),
                new Case("{\"pair\": []}", "/pair is not a known field"),
                new Case("{\"pairs\": [{\"user\": \"cy\", \"item\": \"soup\"}, 3]}", "/pairs/1 must be an object"),
                new Case("{\"pairs\": [{\"user\": \"cy\"}]}", "/pairs/0/item is missing"),
                new Case("{\"pairs\": [{\"user\": 7, \"item\": \"soup\"}]}", "/pairs/0/user must be a string"),
                new Case("{\"pairs\": [{\"user\": \"cy\", \"item\": \"soup\", \"rating\": 4}]}",
                        "/pairs/0/rating is not a known field"),
                new Case("{\"pairs\": [{\"user\": \"\", \"item\": \"soup\"}]}", "/pairs/0/user has 0 characters"),
                new Case("{\"pairs\": [{\"user\": \"cy\", \"item\": \"" + "x".repeat(129) + "\"}]}",
                        "/pairs/0/item has 129 characters; ids have 1..128"));
        for (Case c : cases) {
            String detail = assertProblem(api.postJson("/v1/predictions", c.body()), 400, ProblemType.INVALID_BODY);
            assertTrue(detail.contains(c.pointer()), c.body() + " -> " + detail);
        }
    }

    @Test
    void more_than_ten_thousand_pairs_is_a_413_and_ten_thousand_are_answered() {
        assertProblem(api.postJson("/v1/predictions", pairs(10_001)), 413, ProblemType.BATCH_TOO_LARGE);
        HttpResponse<String> full = api.postJson("/v1/predictions", pairs(10_000));
        assertEquals(200, full.statusCode(), full.body());
        assertEquals(10_000, ApiClient.json(full).path("predictions").size());
    }

    @Test
    void a_body_over_one_mebibyte_is_a_413_whether_its_length_is_declared_or_not() {
        String big = "{\"pairs\": [], \"padding\": \"" + "x".repeat(Limits.MAX_BODY_BYTES) + "\"}";
        assertProblem(api.postJson("/v1/predictions", big), 413, ProblemType.BODY_TOO_LARGE);
        byte[] bytes = big.getBytes(StandardCharsets.UTF_8);
        HttpRequest.BodyPublisher chunked = new UnknownLength(HttpRequest.BodyPublishers.ofByteArray(bytes));
        assertProblem(api.post("/v1/predictions", "application/json", chunked), 413, ProblemType.BODY_TOO_LARGE);
    }

    @Test
    void a_body_that_is_not_declared_json_is_a_415() {
        assertProblem(api.post("/v1/predictions", "text/plain", HttpRequest.BodyPublishers.ofString("{\"pairs\": []}")),
                415, ProblemType.UNSUPPORTED_MEDIA_TYPE);
        assertProblem(api.post("/v1/predictions", null, HttpRequest.BodyPublishers.ofString("{\"pairs\": []}")),
                415, ProblemType.UNSUPPORTED_MEDIA_TYPE);
        HttpResponse<String> withCharset = api.post("/v1/predictions", "application/json; charset=utf-8",
                HttpRequest.BodyPublishers.ofString("{\"pairs\": []}"));
        assertEquals(200, withCharset.statusCode(), withCharset.body());
    }

    private static String pairs(int n) {
        StringBuilder body = new StringBuilder("{\"pairs\":[");
        for (int j = 0; j < n; j++) {
            body.append(j == 0 ? "" : ",").append("{\"user\":\"cy\",\"item\":\"")
                    .append(KitchenModel.SERVABLE_ITEMS[j % KitchenModel.SERVABLE_ITEMS.length]).append("\"}");
        }
        return body.append("]}").toString();
    }

    /** A publisher that hides its length, so the client sends the body chunked. */
    private record UnknownLength(HttpRequest.BodyPublisher inner) implements HttpRequest.BodyPublisher {
        @Override
        public long contentLength() {
            return -1;
        }

        @Override
        public void subscribe(Flow.Subscriber<? super java.nio.ByteBuffer> subscriber) {
            inner.subscribe(subscriber);
        }
    }
}
