package dev.twofold.service.fresh;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;

import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.service.Service;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.http.AccessPolicy;
import dev.twofold.service.model.ServingModel;
import dev.twofold.service.scoring.Strategy;
import dev.twofold.service.scoring.UserVector;
import dev.twofold.service.testing.ApiClient;
import dev.twofold.service.testing.FoldInReference;
import dev.twofold.service.testing.TwoTastes;
import dev.twofold.trainer.fit.Coupling;
import java.sql.SQLException;
import java.time.Duration;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/** Fold-in under the neighbour coupling (the trainer's default): trust pulls towards the trusted users' factors. */
class NeighbourFoldInTest {

    /** As in {@link FoldInTest}: float32 storage of the folded vector against a double solve. */
    private static final double FOLD_TOLERANCE = 1e-5;

    private static Database db;
    private static Service service;
    private static ApiClient api;

    @BeforeAll
    static void start() {
        db = TestDatabases.fresh();
        TwoTastes.write(db);
        TwoTastes.train(db, 2, Coupling.NEIGHBOUR);
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
    void the_folded_vector_equals_a_direct_least_squares_solve_with_the_neighbour_term() throws SQLException {
        String cook = TwoTastes.savouryCook(4);
        assertEquals(202, api.postJson("/v1/ratings", "[{\"user\": \"" + cook + "\", \"item\": \"cake-5\","
                + " \"rating\": 5}]").statusCode());
        assertEquals(202, api.postJson("/v1/trust", "[{\"truster\": \"" + cook + "\", \"trustee\": \""
                + TwoTastes.sweetCook(2) + "\", \"weight\": 0.25}, {\"truster\": \"" + cook + "\", \"trustee\":"
                + " \"nobody-with-factors\"}]").statusCode());

        LiveModel live = service.live();
        ServingModel model = live.model();
        assertEquals("neighbour", model.foldSettings().coupling());
        assertNull(model.trustFactors(), "no Z under the neighbour coupling");
        UserVector folded = live.user(cook);
        assertEquals(Strategy.MODEL, folded.strategy());

        double[] expected = FoldInReference.leastSquares(model, FoldInTest.ratingsOf(db, cook),
                FoldInTest.trustOf(db, cook));
        int k = model.rank();
        for (int x = 0; x < k; x++) {
            assertEquals(expected[x], folded.factors()[folded.offset() + x], FOLD_TOLERANCE, "p[" + x + "]");
        }
        assertEquals(expected[k], folded.bias(), FOLD_TOLERANCE, "b_u");
    }
}
