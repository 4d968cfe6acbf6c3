package dev.twofold.service.fresh;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertNotSame;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import dev.twofold.db.connect.Database;
import dev.twofold.db.ingest.RatingScale;
import dev.twofold.db.ingest.RatingWriter;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.service.Service;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.http.AccessPolicy;
import dev.twofold.service.model.ServingModel;
import dev.twofold.service.scoring.ListCache;
import dev.twofold.service.scoring.Strategy;
import dev.twofold.service.scoring.UserVector;
import dev.twofold.service.testing.ApiClient;
import dev.twofold.service.testing.FoldInReference;
import dev.twofold.service.testing.TwoTastes;
import dev.twofold.trainer.fit.Coupling;
import java.net.http.HttpResponse;
import java.sql.Connection;
import java.sql.PreparedStatement;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/** Ratings and trust edges posted to the API change that user's next answers without a retrain. */
class FoldInTest {

    /**
     * The folded vector is stored as float32; the reference solves in double. 1e-5 covers float32
     * rounding of values of order 1 and of the fixed factors both solves read.
     */
    private static final double FOLD_TOLERANCE = 1e-5;
    /** Erasures are announced like promotions; polling is off here, so this bound is the notification's. */
    private static final long ANNOUNCED_WITHIN_SECONDS = 5;

    private static Database db;
    private static Service service;
    private static ApiClient api;

    @BeforeAll
    static void start() {
        db = TestDatabases.fresh();
        TwoTastes.write(db);
        TwoTastes.train(db, 1, Coupling.SHARED);
        // polling only every hour: nothing here depends on it
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
    void a_new_rating_changes_the_next_recommendations_and_the_rated_item_disappears() {
        String cook = TwoTastes.sweetCook(2);
        JsonNode before = ApiClient.json(api.get("/v1/users/" + cook + "/recommendations?count=10"));
        assertEquals("model", before.path("strategy").asText());
        String top = before.path("items").get(0).path("item").asText();
        // asked again: answered from the list kept for the cook, which the write below must not leave in use
        ListCache.Stats kept = service.live().lists().stats();
        long hits = kept.hits();
        assertEquals(before, ApiClient.json(api.get("/v1/users/" + cook + "/recommendations?count=10")));
        assertEquals(hits + 1, kept.hits(), "the second answer came from the kept list");

        HttpResponse<String> posted = api.postJson("/v1/ratings",
                "[{\"user\": \"" + cook + "\", \"item\": \"" + top + "\", \"rating\": 1, \"time\": 1764600000}]");
        assertEquals(202, posted.statusCode(), posted.body());
        JsonNode accepted = ApiClient.json(posted);
        assertEquals(1, accepted.path("received").asInt());
        assertEquals(1, accepted.path("written").asInt());
        assertEquals(1, accepted.path("foldedUsers").asInt());

        JsonNode after = ApiClient.json(api.get("/v1/users/" + cook + "/recommendations?count=10"));
        assertEquals("model", after.path("strategy").asText());
        List<String> afterItems = items(after);
        assertFalse(afterItems.contains(top), top + " was just rated: " + afterItems);
        assertNotEquals(scores(before), scores(after), "the user's vector was re-solved");
    }

    @Test
    void the_folded_vector_equals_a_direct_least_squares_solve_with_the_trust_terms() throws SQLException {
        String cook = TwoTastes.savouryCook(5);
        assertEquals(202, api.postJson("/v1/ratings", "[{\"user\": \"" + cook + "\", \"item\": \"cake-1\","
                + " \"rating\": 5}, {\"user\": \"" + cook + "\", \"item\": \"cake-2\", \"rating\": 4.5}]").statusCode());
        assertEquals(202, api.postJson("/v1/trust", "[{\"truster\": \"" + cook + "\", \"trustee\": \""
                + TwoTastes.sweetCook(1) + "\", \"weight\": 0.5}]").statusCode());

        LiveModel live = service.live();
        ServingModel model = live.model();
        UserVector folded = live.user(cook);
        assertEquals(Strategy.MODEL, folded.strategy());
        assertNotSame(model.userFactors(), folded.factors(), "a vector of its own, not the trained row");
        assertTrue(model.trustFactors() != null, "the shared coupling keeps Z");

        double[] expected = FoldInReference.leastSquares(model, ratingsOf(db, cook), trustOf(db, cook));
        int k = model.rank();
        for (int x = 0; x < k; x++) {
            assertEquals(expected[x], folded.factors()[folded.offset() + x], FOLD_TOLERANCE, "p[" + x + "]");
        }
        assertEquals(expected[k], folded.bias(), FOLD_TOLERANCE, "b_u");
    }

    @Test
    void a_cook_new_to_everyone_who_rates_is_served_from_their_own_folded_vector() {
        String cook = "newcomer-who-bakes";
        assertEquals(202, api.postJson("/v1/ratings", "[{\"user\": \"" + cook + "\", \"item\": \"cake-3\", \"rating\":"
                + " 5}, {\"user\": \"" + cook + "\", \"item\": \"cake-4\", \"rating\": 5}, {\"user\": \"" + cook + "\","
                + " \"item\": \"stew-3\", \"rating\": 1}]").statusCode());
        JsonNode recs = ApiClient.json(api.get("/v1/users/" + cook + "/recommendations?count=20"));
        assertEquals("model", recs.path("strategy").asText());
        List<String> got = items(recs);
        assertFalse(got.contains("cake-3") || got.contains("cake-4") || got.contains("stew-3"), got.toString());
        assertTrue(TwoTastes.isCake(got.get(0)), "a baker's best guess is a cake: " + got);
    }

    @Test
    void a_user_erased_by_another_process_is_forgotten_by_the_running_service() throws InterruptedException {
        String cook = TwoTastes.sweetCook(7);
        // asked twice, so a list is kept for the cook and answers the second time
        for (int ask = 0; ask < 2; ask++) {
            assertEquals("model", ApiClient.json(api.get("/v1/users/" + cook + "/recommendations")).path("strategy")
                    .asText());
        }
        assertTrue(new RatingWriter(db, RatingScale.DEFAULT).forgetUser(cook));
        long deadline = System.nanoTime() + TimeUnit.SECONDS.toNanos(ANNOUNCED_WITHIN_SECONDS);
        JsonNode recs;
        do {
            Thread.sleep(10);
            recs = ApiClient.json(api.get("/v1/users/" + cook + "/recommendations"));
        } while (!recs.path("strategy").asText().equals("popular") && System.nanoTime() < deadline);
        assertEquals("popular", recs.path("strategy").asText(),
                "served as someone nobody knows, not from the kept list");
        recs = ApiClient.json(api.get("/v1/users/" + cook + "/recommendations?count=1000"));
        assertEquals("popular", recs.path("strategy").asText());
        assertEquals(service.live().model().numItems(), recs.path("items").size(), "nothing of theirs is excluded");
    }

    /** The user's ratings as (item id, rating), read with plain SQL. */
    static List<Object[]> ratingsOf(Database db, String user) throws SQLException {
        return query(db, "select i.external_id, r.rating from ratings r join users u on u.idx = r.user_idx"
                + " join items i on i.idx = r.item_idx where u.external_id = ?", user);
    }

    /** The user's trust edges as (trustee id, weight), read with plain SQL. */
    static List<Object[]> trustOf(Database db, String user) throws SQLException {
        return query(db, "select b.external_id, t.weight from trust t join users a on a.idx = t.truster_idx"
                + " join users b on b.idx = t.trustee_idx where a.external_id = ?", user);
    }

    static List<Object[]> query(Database db, String sql, String parameter) throws SQLException {
        List<Object[]> out = new ArrayList<>();
        try (Connection c = db.dataSource().getConnection(); PreparedStatement ps = c.prepareStatement(sql)) {
            ps.setString(1, parameter);
            try (ResultSet rs = ps.executeQuery()) {
                while (rs.next()) {
                    out.add(new Object[] {rs.getObject(1), rs.getObject(2)});
                }
            }
        }
        return out;
    }

    static List<String> items(JsonNode recommendations) {
        List<String> out = new ArrayList<>();
        recommendations.path("items").forEach(item -> out.add(item.path("item").asText()));
        return out;
    }

    private static List<Double> scores(JsonNode recommendations) {
        List<Double> out = new ArrayList<>();
        recommendations.path("items").forEach(item -> out.add(item.path("score").asDouble()));
        return out;
    }
}
