package dev.twofold.service.http;

import static dev.twofold.service.http.ProblemAssertions.assertProblem;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import dev.twofold.db.connect.Database;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.service.Service;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.testing.ApiClient;
import dev.twofold.service.testing.KitchenDatabase;
import dev.twofold.service.testing.KitchenModel;
import java.net.http.HttpResponse;
import java.nio.file.Path;
import java.time.Duration;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** The model admin routes over the registry. */
class ModelsApiTest {

    @TempDir
    static Path dir;
    private static Database db;
    private static Service service;
    private static ApiClient api;
    private static long active;
    private static long failed;

    @BeforeAll
    static void start() {
        db = TestDatabases.fresh();
        KitchenDatabase.importRatings(db, dir);
        active = KitchenDatabase.publishModel(db);
        ModelRegistry registry = new ModelRegistry(db);
        failed = registry.create(KitchenModel.header());
        registry.finish(failed, ModelRegistry.FAILED, "{}", "IllegalStateException: the fit diverged");
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
    void the_list_shows_every_version_newest_first_and_where_the_pointer_stands() {
        HttpResponse<String> response = api.get("/v1/models");
        assertEquals(200, response.statusCode(), response.body());
        JsonNode body = ApiClient.json(response);
        assertEquals(active, body.path("active").asLong());
        assertTrue(body.path("previous").isNull());
        assertEquals(active, body.path("serving").asLong());
        JsonNode models = body.path("models");
        assertEquals(2, models.size());
        assertEquals(failed, models.get(0).path("id").asLong());
        assertEquals("failed", models.get(0).path("status").asText());
        assertEquals("IllegalStateException: the fit diverged", models.get(0).path("reason").asText());
        JsonNode live = models.get(1);
        assertEquals("active", live.path("status").asText());
        assertEquals(KitchenModel.K, live.path("rank").asInt());
        assertEquals(KitchenModel.MU, live.path("globalMean").floatValue());
        assertTrue(live.path("params").isObject() && live.path("metrics").isObject() && live.path("counts").isObject());
        assertTrue(live.path("createdAt").asText().endsWith("Z"), live.path("createdAt").asText());
    }

    @Test
    void one_version_is_shown_by_id_and_unknown_or_malformed_ids_are_problems() {
        JsonNode model = ApiClient.json(api.get("/v1/models/" + active));
        assertEquals(active, model.path("id").asLong());
        assertEquals("shared", model.path("coupling").asText());
        assertProblem(api.get("/v1/models/987654"), 404, ProblemType.NOT_FOUND);
        assertProblem(api.get("/v1/models/seven"), 400, ProblemType.INVALID_PARAMETER);
        assertProblem(api.send("POST", "/v1/models/987654/promote"), 404, ProblemType.NOT_FOUND);
    }

    @Test
    void a_version_that_cannot_serve_is_not_promoted_and_there_is_nothing_to_roll_back_to_yet() {
        String detail = assertProblem(api.send("POST", "/v1/models/" + failed + "/promote"), 409,
                ProblemType.MODEL_STATE);
        assertTrue(detail.contains("failed"), detail);
        assertProblem(api.send("POST", "/v1/models/rollback"), 409, ProblemType.MODEL_STATE);
        assertEquals(active, new ModelRegistry(db).active().orElseThrow().id(), "nothing changed");
    }
}
