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
import java.net.URLEncoder;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.HashSet;
import java.util.List;
import java.util.Set;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

class RecommendationApiTest {

    /** Scores travel as JSON floats; compared with the double-precision reference. */
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
    void a_known_user_gets_model_scores_equal_to_the_formula_best_first() {
        HttpResponse<String> response = api.get("/v1/users/cy/recommendations?count=10");
        assertEquals(200, response.statusCode(), response.body());
        assertEquals("application/json", response.headers().firstValue("Content-Type").orElse("").split(";")[0]);
        JsonNode body = ApiClient.json(response);
        assertEquals("cy", body.path("user").asText());
        assertEquals(KitchenModel.MODEL_ID, body.path("model").asLong());
        assertEquals("model", body.path("strategy").asText());

        int cy = 2;
        List<Integer> expected = new ArrayList<>();
        for (int i = 0; i < KitchenModel.SERVABLE_ITEMS.length; i++) {
            expected.add(i);
        }
        expected.sort(Comparator.<Integer>comparingDouble(i -> -KitchenModel.rawPrediction(cy, i))
                .thenComparingInt(i -> i));
        JsonNode items = body.path("items");
        assertEquals(expected.size(), items.size());
        double previous = Double.POSITIVE_INFINITY;
        for (int j = 0; j < items.size(); j++) {
            int item = expected.get(j);
            assertEquals(KitchenModel.ITEM_IDS[item], items.get(j).path("item").asText(), "rank " + j);
            double score = items.get(j).path("score").asDouble();
            assertEquals(KitchenModel.clamp(KitchenModel.rawPrediction(cy, item)), score, SCORE_TOLERANCE);
            assertTrue(score <= KitchenModel.SCALE_MAX && score >= KitchenModel.SCALE_MIN, "clamped: " + score);
            assertTrue(score <= previous, "descending at rank " + j);
            previous = score;
        }
        assertEquals(KitchenModel.SCALE_MAX, items.get(0).path("score").asDouble(), "cake is predicted 6.35, shown 5");
    }

    @Test
    void rated_items_never_appear_even_when_every_item_is_asked_for() {
        Set<String> ana = itemsOf(api.get("/v1/users/ana/recommendations?count=1000"));
        assertEquals(Set.of("cake", "bread", "salad", "pie"), ana, "ana rated soup and stew");
        Set<String> ben = itemsOf(api.get("/v1/users/ben/recommendations?count=1000"));
        assertFalse(ben.contains("cake"));
        assertEquals(5, ben.size());
    }

    @Test
    void excluded_items_never_appear_whether_comma_separated_or_repeated() {
        Set<String> items = itemsOf(api.get("/v1/users/cy/recommendations?exclude=cake,bread&exclude=stew"
                + "&exclude=no-such-recipe"));
        assertEquals(Set.of("pie", "soup", "salad"), items);
    }

    @Test
    void count_limits_the_list_and_defaults_to_ten() {
        JsonNode two = ApiClient.json(api.get("/v1/users/cy/recommendations?count=2"));
        assertEquals(2, two.path("items").size());
        assertEquals("cake", two.path("items").get(0).path("item").asText());
        assertEquals("bread", two.path("items").get(1).path("item").asText(), "bread ties pie, lower index first");
        assertEquals(200, api.get("/v1/users/cy/recommendations?count=1000").statusCode());
        assertEquals(6, ApiClient.json(api.get("/v1/users/cy/recommendations")).path("items").size());
    }

    @Test
    void an_unknown_user_gets_popular_items_scored_by_mean_plus_item_bias() {
        JsonNode body = ApiClient.json(api.get("/v1/users/zoe/recommendations?count=3&exclude=salad"));
        assertEquals("popular", body.path("strategy").asText());
        assertEquals("zoe", body.path("user").asText());
        String[] expected = {"cake", "soup", "bread"};
        for (int j = 0; j < expected.length; j++) {
            JsonNode item = body.path("items").get(j);
            assertEquals(expected[j], item.path("item").asText());
            int i = KitchenModel.itemIndex(expected[j]);
            assertEquals(KitchenModel.MU + KitchenModel.B_I[i], item.path("score").asDouble(), SCORE_TOLERANCE);
        }
    }

    @Test
    void a_user_known_without_factors_gets_popular_items_minus_their_ratings() {
        JsonNode body = ApiClient.json(api.get("/v1/users/dee/recommendations"));
        assertEquals("popular", body.path("strategy").asText());
        assertEquals(Set.of("soup", "bread", "pie", "stew"), itemsOf(body));
    }

    @Test
    void ids_with_spaces_and_non_ascii_characters_round_trip() {
        String id = "crème brûlée fan";
        JsonNode body = ApiClient.json(api.get("/v1/users/" + URLEncoder.encode(id, StandardCharsets.UTF_8)
                .replace("+", "%20") + "/recommendations"));
        assertEquals(id, body.path("user").asText());
    }

    @Test
    void an_id_with_an_encoded_slash_stays_one_id() {
        HttpResponse<String> response = api.get("/v1/users/a%2Fb/recommendations");
        assertEquals(200, response.statusCode(), response.body());
        assertEquals("a/b", ApiClient.json(response).path("user").asText());
    }

    @Test
    void a_count_outside_one_to_a_thousand_is_a_400_naming_the_parameter_and_range() {
        for (String count : new String[] {"0", "1001", "-3", "ten", "2.5", ""}) {
            String detail = assertProblem(api.get("/v1/users/cy/recommendations?count=" + count), 400,
                    ProblemType.INVALID_PARAMETER);
            assertTrue(detail.contains("count") && detail.contains("1..1000"), detail);
        }
    }

    @Test
    void ids_longer_than_128_characters_are_a_400() {
        String longId = "x".repeat(129);
        String detail = assertProblem(api.get("/v1/users/" + longId + "/recommendations"), 400,
                ProblemType.INVALID_PARAMETER);
        assertTrue(detail.contains("user") && detail.contains("129") && detail.contains("1..128"), detail);
        assertEquals(200, api.get("/v1/users/" + "x".repeat(128) + "/recommendations").statusCode());

        detail = assertProblem(api.get("/v1/users/cy/recommendations?exclude=soup," + longId), 400,
                ProblemType.INVALID_PARAMETER);
        assertTrue(detail.contains("exclude") && detail.contains("#2"), detail);
        detail = assertProblem(api.get("/v1/users/cy/recommendations?exclude=soup,,cake"), 400,
                ProblemType.INVALID_PARAMETER);
        assertTrue(detail.contains("0 characters"), detail);
    }

    @Test
    void an_unknown_route_is_a_404_problem() {
        String detail = assertProblem(api.get("/v1/nothing-here"), 404, ProblemType.NOT_FOUND);
        assertTrue(detail.contains("/v1/nothing-here"), detail);
        assertProblem(api.get("/"), 404, ProblemType.NOT_FOUND);
    }

    @Test
    void a_known_route_with_the_wrong_method_is_a_405_problem() {
        assertProblem(api.send("DELETE", "/v1/users/cy/recommendations"), 405, ProblemType.METHOD_NOT_ALLOWED);
        assertProblem(api.get("/v1/predictions"), 405, ProblemType.METHOD_NOT_ALLOWED);
    }

    @Test
    void health_says_live_and_ready_with_the_model_id() {
        HttpResponse<String> live = api.get("/health/live");
        assertEquals(200, live.statusCode());
        assertEquals("live", ApiClient.json(live).path("status").asText());
        HttpResponse<String> ready = api.get("/health/ready");
        assertEquals(200, ready.statusCode());
        assertEquals(KitchenModel.MODEL_ID, ApiClient.json(ready).path("model").asLong());
    }

    private static Set<String> itemsOf(HttpResponse<String> response) {
        assertEquals(200, response.statusCode(), response.body());
        return itemsOf(ApiClient.json(response));
    }

    private static Set<String> itemsOf(JsonNode body) {
        Set<String> items = new HashSet<>();
        body.path("items").forEach(item -> items.add(item.path("item").asText()));
        assertEquals(body.path("items").size(), items.size(), "no item twice");
        return items;
    }
}
