package dev.twofold.service.access;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import dev.twofold.db.access.ApiKeys;
import dev.twofold.db.access.KeyRole;
import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.service.Service;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.http.ProblemType;
import dev.twofold.service.testing.ApiClient;
import dev.twofold.service.testing.Contract;
import dev.twofold.service.testing.KitchenDatabase;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.PreparedStatement;
import java.time.Duration;
import java.util.ArrayList;
import java.util.Base64;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.function.IntPredicate;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Who may call what, against a real service on 127.0.0.1 with keys in a real PostgreSQL: every
 * operation of openapi.yaml (the list comes from the file, and the file must name a role or
 * {@code security: []} for each, so a new route cannot slip past) with no key, a key never
 * issued, a revoked key, and a key of each role. Protected operations refuse the first three with
 * 401 and a Bearer challenge, refuse a role that is too small with 403, and admit the rest
 * ({@code admin} ⊇ {@code write} ⊇ {@code read}); open operations answer the same whatever is sent.
 * Revocation reaches the running service by notification and, failing that, by polling.
 */
class AccessMatrixTest {

    /** Keys re-read this often without a notification; short so the polling test stays short. */
    private static final Duration POLL = Duration.ofSeconds(1);
    /** Upper bound on waiting for a key change to reach the service: a bound on a broken test, not a speed target. */
    private static final Duration WAIT = Duration.ofSeconds(30);
    private static final List<String> ROLES = List.of("read", "write", "admin");

    @TempDir
    static Path dir;
    private static Database db;
    private static Service service;
    private static ApiClient api;
    private static ApiKeys keys;
    private static long model;
    /** Credential name to the key it sends (null: no Authorization header). */
    private static final Map<String, String> CREDENTIALS = new LinkedHashMap<>();

    @BeforeAll
    static void start() {
        db = TestDatabases.fresh();
        KitchenDatabase.importRatings(db, dir);
        model = KitchenDatabase.publishModel(db);
        keys = new ApiKeys(db);
        CREDENTIALS.put("no key", null);
        CREDENTIALS.put("a key never issued", neverIssued());
        String revoked = keys.create("matrix-revoked", KeyRole.ADMIN).key();
        assertTrue(keys.revoke("matrix-revoked"));
        CREDENTIALS.put("a revoked admin key", revoked);
        for (String role : ROLES) {
            CREDENTIALS.put(role, keys.create("matrix-" + role, KeyRole.parse(role)).key());
        }
        ServiceSettings settings = new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(5), POLL);
        service = new Service(settings, new KeyRing(settings.retryAfterSeconds()), db);
        api = new ApiClient(service.start());
    }

    @AfterAll
    static void stop() {
        service.close();
        db.close();
    }

    @Test
    void every_operation_of_the_contract_admits_exactly_the_roles_it_names() {
        List<Contract.Operation> operations = Contract.operations(Contract.parse());
        assertTrue(operations.stream().anyMatch(op -> op.role() == null), "the contract has open operations");
        List<String> failures = new ArrayList<>();
        for (Contract.Operation op : operations) {
            if (op.template().startsWith("/v1/")) {
                assertNotNull(op.role(), op + " is a /v1 operation without a role");
                assertTrue(ROLES.contains(op.role()), op + " names the role '" + op.role() + "'");
            }
            Integer openStatus = null;
            for (Map.Entry<String, String> credential : CREDENTIALS.entrySet()) {
                HttpResponse<String> response = call(op, credential.getValue());
                String where = op + " with " + credential.getKey() + " -> " + response.statusCode() + " "
                        + response.body();
                try {
                    if (op.role() == null) {
                        if (openStatus == null) {
                            openStatus = response.statusCode();
                        }
                        assertEquals(openStatus, response.statusCode(), where + ": an open route ignores keys");
                        assertFalse(response.headers().firstValue("WWW-Authenticate").isPresent(), where);
                    } else if (!ROLES.contains(credential.getKey())) {
                        assertRefused(response, 401, ProblemType.UNAUTHORIZED, op, where);
                        String challenge = response.headers().firstValue("WWW-Authenticate").orElse("");
                        assertTrue(challenge.startsWith("Bearer "), where + ": challenge '" + challenge + "'");
                        assertEquals(credential.getValue() != null, challenge.contains("error=\"invalid_token\""), where);
                    } else if (ROLES.indexOf(credential.getKey()) < ROLES.indexOf(op.role())) {
                        assertRefused(response, 403, ProblemType.FORBIDDEN, op, where);
                        assertTrue(ApiClient.json(response).path("detail").asText().contains(op.role()), where);
                    } else {
                        assertAdmitted(response, op, where);
                    }
                } catch (AssertionError e) {
                    failures.add(e.getMessage());
                }
            }
        }
        assertTrue(failures.isEmpty(), failures.size() + " cells of the matrix are wrong:\n" + String.join("\n", failures));
    }

    @Test
    void a_key_created_while_serving_works_and_stops_working_once_revoked() throws InterruptedException {
        String key = keys.create("matrix-short-lived", KeyRole.READ).key();
        ApiClient holder = api.withKey(key);
        awaitStatus(holder, status -> status == 200, "the new key is taken up");
        assertTrue(keys.revoke("matrix-short-lived"));
        HttpResponse<String> refused = awaitStatus(holder, status -> status == 401, "the revoked key is refused");
        assertEquals(ProblemType.UNAUTHORIZED.uri(), ApiClient.json(refused).path("type").asText());
    }

    @Test
    void a_revocation_whose_notification_was_missed_is_found_by_polling() throws Exception {
        ApiKeys.Created created = keys.create("matrix-quietly-revoked", KeyRole.WRITE);
        ApiClient holder = api.withKey(created.key());
        awaitStatus(holder, status -> status == 200, "the new key is taken up");
        try (Connection c = db.dataSource().getConnection();
                PreparedStatement ps = c.prepareStatement("update api_keys set revoked_at = now() where id = ?")) {
            ps.setLong(1, created.stored().id()); // no NOTIFY: only polling can find this
            assertEquals(1, ps.executeUpdate());
        }
        awaitStatus(holder, status -> status == 401, "the quietly revoked key is refused");
    }

    @Test
    void the_scheme_name_is_case_insensitive_and_other_schemes_are_refused() {
        String reader = CREDENTIALS.get("read");
        assertEquals(200, send("bearer " + reader).statusCode());
        assertEquals(200, send("BEARER   " + reader + "  ").statusCode());
        HttpResponse<String> basic = send("Basic " + Base64.getEncoder().encodeToString(("x:" + reader).getBytes()));
        assertEquals(401, basic.statusCode(), basic.body());
        assertEquals(401, send("Bearer").statusCode());
        assertEquals(401, send(reader).statusCode());
    }

    @Test
    void health_metrics_and_the_contract_need_no_key_and_readiness_says_keys_were_read() {
        ApiClient anonymous = api.withKey(null);
        for (String path : List.of("/health/live", "/health/ready", "/metrics", "/openapi.yaml", "/dashboard",
                "/dashboard/data")) {
            HttpResponse<String> response = anonymous.get(path);
            assertEquals(200, response.statusCode(), path + ": " + response.body());
        }
        assertEquals(model, ApiClient.json(anonymous.get("/health/ready")).path("model").asLong());
    }

    private static void assertRefused(HttpResponse<String> response, int status, ProblemType type,
            Contract.Operation op, String where) {
        assertEquals(status, response.statusCode(), where);
        assertTrue(op.lists(status), where + ": openapi.yaml does not list " + status + " for " + op);
        assertEquals("application/problem+json", response.headers().firstValue("Content-Type").orElse(""), where);
        JsonNode problem = ApiClient.json(response);
        assertEquals(type.uri(), problem.path("type").asText(), where);
        assertEquals(status, problem.path("status").asInt(), where);
    }

    private static void assertAdmitted(HttpResponse<String> response, Contract.Operation op, String where) {
        assertNotEquals(401, response.statusCode(), where);
        assertNotEquals(403, response.statusCode(), where);
        assertTrue(response.statusCode() < 500, where);
        assertTrue(op.lists(response.statusCode()), where + ": not a listed answer of " + op);
    }

    private static HttpResponse<String> call(Contract.Operation op, String key) {
        HttpRequest.Builder request = HttpRequest.newBuilder(api.uri(Contract.concrete(op.template(), model)));
        if (op.example() != null) {
            request.header("Content-Type", "application/json")
                    .method(op.method(), HttpRequest.BodyPublishers.ofString(op.example()));
        } else {
            request.method(op.method(), HttpRequest.BodyPublishers.noBody());
        }
        return api.withKey(key).send(request);
    }

    private static HttpResponse<String> send(String authorization) {
        return api.send(HttpRequest.newBuilder(api.uri("/v1/users/ana/recommendations"))
                .header("Authorization", authorization).GET());
    }

    private static HttpResponse<String> awaitStatus(ApiClient client, IntPredicate wanted, String what)
            throws InterruptedException {
        long deadline = System.nanoTime() + WAIT.toNanos();
        while (true) {
            HttpResponse<String> response = client.get("/v1/users/ana/recommendations");
            if (wanted.test(response.statusCode())) {
                return response;
            }
            if (System.nanoTime() > deadline) {
                throw new AssertionError("gave up after " + WAIT + " waiting until " + what + "; last answer "
                        + response.statusCode() + " " + response.body());
            }
            Thread.sleep(50);
        }
    }

    /** A key of the right shape that was never stored (fixed seed: the same every run). */
    private static String neverIssued() {
        byte[] bytes = new byte[ApiKeys.KEY_BYTES];
        new SplittableRandom(7).nextBytes(bytes);
        return ApiKeys.PREFIX + Base64.getUrlEncoder().withoutPadding().encodeToString(bytes);
    }
}
