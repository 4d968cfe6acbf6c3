package dev.twofold.service.http;

import static dev.twofold.service.http.ProblemAssertions.assertProblem;
import static org.junit.jupiter.api.Assertions.assertEquals;

import com.fasterxml.jackson.databind.JsonNode;
import dev.twofold.service.Service;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.testing.ApiClient;
import dev.twofold.service.testing.KitchenModel;
import java.time.Duration;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.List;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

class SimilarItemsApiTest {

    /** Cosines travel as JSON floats; compared with the double-precision reference. */
    private static final double COSINE_TOLERANCE = 1e-5;

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
    void items_come_back_by_cosine_of_their_factors_best_first_without_the_item_itself() {
        for (String item : KitchenModel.SERVABLE_ITEMS) {
            JsonNode body = ApiClient.json(api.get("/v1/items/" + item + "/similar?count=10"));
            assertEquals(item, body.path("item").asText());
            assertEquals(KitchenModel.MODEL_ID, body.path("model").asLong());
            int self = KitchenModel.itemIndex(item);
            List<Integer> expected = new ArrayList<>();
            for (int i = 0; i < KitchenModel.SERVABLE_ITEMS.length; i++) {
                if (i != self) {
                    expected.add(i);
                }
            }
            expected.sort(Comparator.<Integer>comparingDouble(i -> -cosine(self, i)).thenComparingInt(i -> i));
            JsonNode items = body.path("items");
            assertEquals(expected.size(), items.size());
            for (int j = 0; j < items.size(); j++) {
                assertEquals(KitchenModel.ITEM_IDS[expected.get(j)], items.get(j).path("item").asText(), item + " #" + j);
                assertEquals(cosine(self, expected.get(j)), items.get(j).path("score").asDouble(), COSINE_TOLERANCE);
            }
        }
        JsonNode bread = ApiClient.json(api.get("/v1/items/bread/similar?count=1"));
        assertEquals("pie", bread.path("items").get(0).path("item").asText(), "identical factors");
        assertEquals(1.0, bread.path("items").get(0).path("score").asDouble(), COSINE_TOLERANCE);
    }

    @Test
    void an_item_the_model_cannot_score_is_not_found_and_count_is_checked() {
        String detail = assertProblem(api.get("/v1/items/tart/similar"), 404, ProblemType.NOT_FOUND);
        assertEquals(true, detail.contains("tart"), detail);
        assertProblem(api.get("/v1/items/soup/similar?count=0"), 400, ProblemType.INVALID_PARAMETER);
        assertProblem(api.get("/v1/items/soup/similar?count=1001"), 400, ProblemType.INVALID_PARAMETER);
    }

    /** cos(q_a, q_b) in double from KitchenModel's numbers. */
    private static double cosine(int a, int b) {
        double dot = 0;
        double na = 0;
        double nb = 0;
        for (int f = 0; f < KitchenModel.K; f++) {
            double x = KitchenModel.Q[a * KitchenModel.K + f];
            double y = KitchenModel.Q[b * KitchenModel.K + f];
            dot += x * y;
            na += x * x;
            nb += y * y;
        }
        return dot / Math.sqrt(na * nb);
    }
}
