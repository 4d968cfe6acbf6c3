package dev.twofold.service;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import dev.twofold.db.access.ApiKeys;
import dev.twofold.db.access.KeyRole;
import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.service.testing.ApiClient;
import dev.twofold.service.testing.Await;
import dev.twofold.service.testing.KitchenDatabase;
import java.net.http.HttpResponse;
import java.nio.file.Path;
import java.time.Duration;
import java.util.HashMap;
import java.util.Map;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

class ServeCommandTest {

    /** Upper bound on waits: one model poll interval plus loading, with room for a busy machine. */
    private static final Duration WAIT = Duration.ofSeconds(60);

    @Test
    void serve_waits_for_a_first_model_then_answers_from_it_and_stops_cleanly(@TempDir Path dir) throws Exception {
        ExecutorService runner = Executors.newSingleThreadExecutor();
        try (Database db = TestDatabases.fresh()) {
            Map<String, String> env = new HashMap<>(TestDatabases.environment(db));
            env.put(ServiceSettings.HOST_VARIABLE, "127.0.0.1");
            env.put(ServiceSettings.PORT_VARIABLE, "0");
            String key = new ApiKeys(db).create("serve-test", KeyRole.READ).key();
            ServeCommand serve = new ServeCommand(env, false);
            Future<Integer> exit = runner.submit(serve);
            Await.until("serving", WAIT, () -> serve.port() > 0 || exit.isDone());
            ApiClient api = new ApiClient(serve.port(), key);

            assertEquals(200, api.get("/health/live").statusCode());
            assertEquals(503, api.get("/health/ready").statusCode());

            KitchenDatabase.importRatings(db, dir);
            long id = KitchenDatabase.publishModel(db);
            Await.until("ready", WAIT, () -> api.get("/health/ready").statusCode() == 200);

            assertEquals(401, api.withKey(null).get("/v1/users/ana/recommendations").statusCode(),
                    "serve checks API keys unless told otherwise");
            HttpResponse<String> response = api.get("/v1/users/ana/recommendations");
            assertEquals(200, response.statusCode(), response.body());
            JsonNode body = ApiClient.json(response);
            assertEquals(id, body.path("model").asLong());
            assertEquals("model", body.path("strategy").asText());
            body.path("items").forEach(item -> assertTrue(!item.path("item").asText().equals("soup")
                    && !item.path("item").asText().equals("stew"), "ana rated " + item));

            serve.stop();
            assertEquals(0, exit.get(WAIT.toSeconds(), TimeUnit.SECONDS));
        } finally {
            runner.shutdownNow();
            runner.awaitTermination(WAIT.toSeconds(), TimeUnit.SECONDS);
        }
    }
}
