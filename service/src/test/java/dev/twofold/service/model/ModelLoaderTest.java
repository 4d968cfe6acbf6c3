package dev.twofold.service.model;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.service.scoring.Predictor;
import dev.twofold.service.testing.KitchenDatabase;
import dev.twofold.service.testing.KitchenModel;
import java.nio.file.Path;
import java.util.HashSet;
import java.util.Set;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

class ModelLoaderTest {

    /** Factors go through float32 storage unchanged; the tolerance covers float arithmetic only. */
    private static final double SCORE_TOLERANCE = 1e-5;

    @TempDir
    static Path dir;
    private static Database db;
    private static long publishedId;

    @BeforeAll
    static void publish() {
        db = TestDatabases.fresh();
        KitchenDatabase.importRatings(db, dir);
        publishedId = KitchenDatabase.publishModel(db);
    }

    @AfterAll
    static void close() {
        db.close();
    }

    @Test
    void without_a_promoted_model_there_is_nothing_to_load() {
        try (Database empty = TestDatabases.fresh()) {
            assertTrue(new ModelLoader(empty).loadActive().isEmpty());
        }
    }

    @Test
    void the_active_model_written_through_the_registry_loads_back_and_predicts_the_same() {
        ServingModel model = new ModelLoader(db).loadActive().orElseThrow();

        assertEquals(publishedId, model.id());
        assertEquals(KitchenModel.K, model.rank());
        assertEquals(KitchenModel.MU, model.globalMean());
        assertEquals(KitchenModel.SERVABLE_ITEMS.length, model.numItems());
        assertEquals(-1, model.itemIndex("tart"), "no factors");
        assertEquals(-1, model.itemIndex("jam"), "no factors");
        for (String user : new String[] {"ana", "ben", "cy", "dee", "eve", "zoe"}) {
            int u = model.userIndex(user);
            assertEquals(KitchenDatabase.USERS_WITH_FACTORS.contains(user), model.hasFactors(u), user);
            for (String item : KitchenModel.SERVABLE_ITEMS) {
                double want = KitchenModel.clamp(KitchenDatabase.rawPrediction(user, item));
                assertEquals(want, Predictor.predict(model, u, model.itemIndex(item)), SCORE_TOLERANCE,
                        user + " " + item);
            }
        }
    }

    @Test
    void each_users_rated_items_come_from_the_ratings_in_the_database() {
        ServingModel model = new ModelLoader(db).loadActive().orElseThrow();
        Set<String> expectedAna = Set.of("soup", "stew");
        assertEquals(expectedAna, rated(model, "ana"), "tart is rated but not servable");
        assertEquals(Set.of("cake", "bread"), rated(model, "ben"));
        assertEquals(Set.of(), rated(model, "cy"), "jam is rated but not servable");
        assertEquals(Set.of("cake", "salad"), rated(model, "dee"));
        assertEquals(Set.of("soup", "pie"), rated(model, "eve"));
        assertFalse(model.hasFactors(model.userIndex("eve")));
    }

    private static Set<String> rated(ServingModel model, String user) {
        int u = model.userIndex(user);
        Set<String> items = new HashSet<>();
        for (int r = model.ratedStart(u); r < model.ratedEnd(u); r++) {
            items.add(model.itemId(model.ratedItems()[r]));
        }
        return items;
    }
}
