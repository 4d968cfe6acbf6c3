package dev.twofold.service;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.service.http.AccessPolicy;
import dev.twofold.service.testing.ApiClient;
import dev.twofold.service.testing.TwoTastes;
import java.net.http.HttpResponse;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicLong;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/**
 * Promotions reach running services through PostgreSQL notifications: polling is set to once an
 * hour here, so every switch these tests see was announced, not polled.
 */
class HotSwapTest {

    /** The contract: a promotion from any process reaches every running service within 5 s. */
    private static final long SWITCH_WITHIN_MS = 5_000;
    private static final int CLIENTS = 4;
    private static final int ANSWERS_AFTER = 30;
    private static final long GIVE_UP_MS = 60_000;
    private static final Duration NO_POLLING = Duration.ofHours(1);

    private static Database db;

    @BeforeAll
    static void train() {
        db = TestDatabases.fresh();
        TwoTastes.write(db);
        TwoTastes.train(db, 5);
    }

    @AfterAll
    static void close() {
        db.close();
    }

    private static Service serviceOn(Database database) {
        return new Service(new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(5), NO_POLLING), AccessPolicy.OPEN,
                database);
    }

    /** What one client saw, in order. */
    private record Seen(List<Long> models, List<Long> nanos, int failures, String firstFailure) {
    }

    @Test
    void under_load_a_promotion_switches_the_model_once_within_five_seconds_and_no_request_fails() throws Exception {
        long before = new ModelRegistry(db).active().orElseThrow().id();
        long after = TwoTastes.copyActiveAsCandidate(db);
        try (Service service = serviceOn(db)) {
            int port = service.start();
            assertEquals(before, service.model().orElseThrow().id());
            AtomicLong promotedAt = new AtomicLong();
            ExecutorService clients = Executors.newFixedThreadPool(CLIENTS);
            List<Future<Seen>> seen = new ArrayList<>();
            for (int c = 0; c < CLIENTS; c++) {
                long seed = c;
                seen.add(clients.submit(() -> callUntilSwitched(new ApiClient(port), seed, after)));
            }
            long deadline = System.nanoTime() + TimeUnit.MILLISECONDS.toNanos(GIVE_UP_MS);
            while (service.inFlightRequests() == 0 && System.nanoTime() < deadline) {
                Thread.sleep(1);
            }
            Thread.sleep(200); // let the clients get answers from the old model first
            new ModelRegistry(db).promote(after); // as another process would: commit, then NOTIFY
            promotedAt.set(System.nanoTime());
            clients.shutdown();
            assertTrue(clients.awaitTermination(GIVE_UP_MS, TimeUnit.MILLISECONDS), "clients finished");

            long firstNew = Long.MAX_VALUE;
            for (Future<Seen> future : seen) {
                Seen s = future.get();
                assertEquals(0, s.failures(), "a request failed during the swap: " + s.firstFailure());
                int switches = 0;
                for (int j = 1; j < s.models().size(); j++) {
                    if (!s.models().get(j).equals(s.models().get(j - 1))) {
                        switches++;
                        assertEquals(before, s.models().get(j - 1));
                        assertEquals(after, s.models().get(j));
                        firstNew = Math.min(firstNew, s.nanos().get(j));
                    }
                }
                assertEquals(before, s.models().get(0), "started on the old model");
                assertEquals(1, switches, "exactly one switch, never back: " + s.models());
            }
            long switchMillis = TimeUnit.NANOSECONDS.toMillis(firstNew - promotedAt.get());
            assertTrue(switchMillis <= SWITCH_WITHIN_MS, "first answer from the new model " + switchMillis
                    + " ms after the promotion committed");
        }
    }

    @Test
    void two_services_on_one_database_follow_promotion_and_rollback_made_through_either_api() throws Exception {
        long first = new ModelRegistry(db).active().orElseThrow().id();
        long second = TwoTastes.copyActiveAsCandidate(db);
        DatabaseSettings same = DatabaseSettings.fromEnvironment(TestDatabases.environment(db));
        try (Database poolA = Database.open(same); Database poolB = Database.open(same);
                Service a = serviceOn(poolA); Service b = serviceOn(poolB)) {
            ApiClient apiA = new ApiClient(a.start());
            ApiClient apiB = new ApiClient(b.start());
            awaitServing(first, apiA, apiB);

            HttpResponse<String> promote = apiA.send("POST", "/v1/models/" + second + "/promote");
            assertEquals(200, promote.statusCode(), promote.body());
            assertEquals(second, ApiClient.json(promote).path("active").asLong());
            assertEquals(first, ApiClient.json(promote).path("previous").asLong());
            awaitServing(second, apiA, apiB);

            HttpResponse<String> rollback = apiB.send("POST", "/v1/models/rollback");
            assertEquals(200, rollback.statusCode(), rollback.body());
            assertEquals(first, ApiClient.json(rollback).path("active").asLong());
            awaitServing(first, apiA, apiB);
        }
    }

    @Test
    void a_rating_sent_to_one_service_is_folded_into_the_other_on_the_same_database() throws Exception {
        DatabaseSettings same = DatabaseSettings.fromEnvironment(TestDatabases.environment(db));
        try (Database poolA = Database.open(same); Database poolB = Database.open(same);
                Service a = serviceOn(poolA); Service b = serviceOn(poolB)) {
            ApiClient apiA = new ApiClient(a.start());
            ApiClient apiB = new ApiClient(b.start());
            String cook = TwoTastes.savouryCook(9);
            String path = "/v1/users/" + cook + "/recommendations?count=3";
            String top = ApiClient.json(apiB.get(path)).path("items").get(0).path("item").asText();

            HttpResponse<String> posted = apiA.postJson("/v1/ratings", "[{\"user\": \"" + cook + "\", \"item\": \""
                    + top + "\", \"rating\": 2}]");
            assertEquals(202, posted.statusCode(), posted.body());
            long deadline = System.nanoTime() + TimeUnit.MILLISECONDS.toNanos(SWITCH_WITHIN_MS);
            while (ApiClient.json(apiB.get(path)).path("items").get(0).path("item").asText().equals(top)) {
                assertTrue(System.nanoTime() < deadline, "the other service still recommends " + top);
                Thread.sleep(10);
            }
            assertTrue(b.live().fresh().get(cook) != null, "folded in from the announcement, not polled");
        }
    }

    @Test
    void a_batch_too_large_for_one_announcement_reaches_the_other_service_in_several() throws Exception {
        DatabaseSettings same = DatabaseSettings.fromEnvironment(TestDatabases.environment(db));
        try (Database poolA = Database.open(same); Database poolB = Database.open(same);
                Service a = serviceOn(poolA); Service b = serviceOn(poolB)) {
            ApiClient apiA = new ApiClient(a.start());
            b.start();
            StringBuilder body = new StringBuilder("[");
            int users = 600;
            String padding = "x".repeat(100); // 600 ids of ~110 bytes: several 8000-byte payloads
            for (int u = 0; u < users; u++) {
                body.append(u == 0 ? "" : ",").append("{\"user\": \"batch-cook-").append(u).append('-').append(padding)
                        .append("\", \"item\": \"").append(TwoTastes.cake(u % TwoTastes.RECIPES_PER_TASTE))
                        .append("\", \"rating\": 4}");
            }
            HttpResponse<String> posted = apiA.postJson("/v1/ratings", body.append(']').toString());
            assertEquals(202, posted.statusCode(), posted.body());
            assertEquals(users, ApiClient.json(posted).path("foldedUsers").asInt());
            long deadline = System.nanoTime() + TimeUnit.SECONDS.toNanos(30);
            int seen = 0;
            while (seen < users && System.nanoTime() < deadline) {
                seen = 0;
                for (int u = 0; u < users; u++) {
                    if (b.live().fresh().get("batch-cook-" + u + "-" + padding) != null) {
                        seen++;
                    }
                }
                Thread.sleep(20);
            }
            assertEquals(users, seen, "every written user was folded into the other service");
        }
    }

    /** Waits until every service answers ready with the model; fails after the contract's 5 s. */
    private static void awaitServing(long model, ApiClient... services) throws InterruptedException {
        long deadline = System.nanoTime() + TimeUnit.MILLISECONDS.toNanos(SWITCH_WITHIN_MS);
        for (ApiClient api : services) {
            while (true) {
                JsonNode ready = ApiClient.json(api.get("/health/ready"));
                if (ready.path("model").asLong() == model) {
                    break;
                }
                assertTrue(System.nanoTime() < deadline, "still serving " + ready + ", not model " + model);
                Thread.sleep(10);
            }
        }
    }

    private static Seen callUntilSwitched(ApiClient api, long seed, long newModel) {
        SplittableRandom random = new SplittableRandom(seed);
        List<Long> models = new ArrayList<>();
        List<Long> nanos = new ArrayList<>();
        int failures = 0;
        String firstFailure = null;
        int afterSwitch = 0;
        long deadline = System.nanoTime() + TimeUnit.MILLISECONDS.toNanos(GIVE_UP_MS);
        while (afterSwitch < ANSWERS_AFTER && System.nanoTime() < deadline) {
            String cook = random.nextBoolean() ? TwoTastes.sweetCook(random.nextInt(TwoTastes.COOKS_PER_TASTE))
                    : "stranger-" + random.nextInt(100);
            try {
                HttpResponse<String> response = api.get("/v1/users/" + cook + "/recommendations?count=5");
                long at = System.nanoTime();
                if (response.statusCode() != 200) {
                    failures++;
                    firstFailure = firstFailure == null ? response.statusCode() + " " + response.body() : firstFailure;
                    continue;
                }
                long model = ApiClient.json(response).path("model").asLong();
                models.add(model);
                nanos.add(at);
                if (model == newModel) {
                    afterSwitch++;
                }
            } catch (RuntimeException e) {
                failures++;
                firstFailure = firstFailure == null ? e.toString() : firstFailure;
            }
        }
        return new Seen(models, nanos, failures, firstFailure);
    }
}
