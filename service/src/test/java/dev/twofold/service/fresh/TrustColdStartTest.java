package dev.twofold.service.fresh;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import dev.twofold.db.connect.Database;
import dev.twofold.db.ingest.RatingScale;
import dev.twofold.db.ingest.RatingWriter;
import dev.twofold.db.ingest.TrustInput;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.service.Service;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.http.AccessPolicy;
import dev.twofold.service.testing.ApiClient;
import dev.twofold.service.testing.TwoTastes;
import java.time.Duration;
import java.util.List;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/** Cooks with no ratings but trusted cooks are served from the taste of the cooks they trust. */
class TrustColdStartTest {

    private static final int COUNT = 10;
    /** Of the top ten for a newcomer who trusts only sweet cooks, at least this many are cakes. */
    private static final int CAKES_AT_LEAST = 9;

    private static Database db;

    @BeforeAll
    static void train() {
        db = TestDatabases.fresh();
        TwoTastes.write(db);
        TwoTastes.train(db, 3);
    }

    @AfterAll
    static void close() {
        db.close();
    }

    private static Service startService() {
        return new Service(new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(5), Duration.ofHours(1)),
                AccessPolicy.OPEN, db);
    }

    @Test
    void a_cook_without_ratings_who_posts_trust_in_sweet_cooks_gets_cakes_ranked_first() {
        try (Service service = startService()) {
            ApiClient api = new ApiClient(service.start());
            String cook = "quiet-newcomer";
            assertEquals("popular", ApiClient.json(api.get("/v1/users/" + cook + "/recommendations")).path("strategy")
                    .asText(), "nothing known yet");
            StringBuilder body = new StringBuilder("[");
            for (int c = 0; c < 4; c++) {
                body.append(c == 0 ? "" : ",").append("{\"truster\": \"").append(cook).append("\", \"trustee\": \"")
                        .append(TwoTastes.sweetCook(c)).append("\"}");
            }
            assertEquals(202, api.postJson("/v1/trust", body.append(']').toString()).statusCode());

            JsonNode recs = ApiClient.json(api.get("/v1/users/" + cook + "/recommendations?count=" + COUNT));
            assertEquals("trust", recs.path("strategy").asText());
            assertMostlyCakes(FoldInTest.items(recs));
        }
    }

    @Test
    void trust_edges_written_after_training_give_a_trust_built_vector_when_the_model_loads() {
        new RatingWriter(db, RatingScale.DEFAULT).upsertTrust(List.of(
                new TrustInput("joined-later", TwoTastes.sweetCook(5)),
                new TrustInput("joined-later", TwoTastes.sweetCook(6), 0.5)));
        try (Service service = startService()) {
            ApiClient api = new ApiClient(service.start());
            assertTrue(service.live().model().trustBuiltUsers() >= 1);
            JsonNode recs = ApiClient.json(api.get("/v1/users/joined-later/recommendations?count=" + COUNT));
            assertEquals("trust", recs.path("strategy").asText());
            assertMostlyCakes(FoldInTest.items(recs));
        }
    }

    private static void assertMostlyCakes(List<String> items) {
        assertEquals(COUNT, items.size());
        assertTrue(TwoTastes.isCake(items.get(0)), items.toString());
        long cakes = items.stream().filter(TwoTastes::isCake).count();
        assertTrue(cakes >= CAKES_AT_LEAST, cakes + " cakes in " + items);
    }
}
