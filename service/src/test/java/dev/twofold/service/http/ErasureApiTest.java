package dev.twofold.service.http;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.access.ApiKeys;
import dev.twofold.db.access.KeyRole;
import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.service.Service;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.access.KeyRing;
import dev.twofold.service.testing.ApiClient;
import dev.twofold.service.testing.Await;
import dev.twofold.service.testing.KitchenDatabase;
import java.net.http.HttpResponse;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.PreparedStatement;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.time.Duration;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * DELETE /v1/users/{user} on one of two services sharing a database: committed before the 204, the
 * user gone from every table, the asking service serving them as unknown at once and the other as
 * soon as the erasure is announced; a second DELETE is 404.
 */
class ErasureApiTest {

    /** No polling: only the erasure's notification can tell the second service. */
    private static final Duration NO_POLLING = Duration.ofHours(1);
    /** Bound on waiting for the announcement: a bound on a broken test, not a speed target. */
    private static final Duration WAIT = Duration.ofSeconds(30);

    @TempDir
    static Path dir;
    private static Database db;
    private static Service asking;
    private static Service other;
    private static ApiClient admin;
    private static ApiClient otherReader;

    @BeforeAll
    static void start() {
        db = TestDatabases.fresh();
        KitchenDatabase.importRatings(db, dir);
        KitchenDatabase.publishModel(db);
        ApiKeys keys = new ApiKeys(db);
        String adminKey = keys.create("erasure-admin", KeyRole.ADMIN).key();
        String readKey = keys.create("erasure-reader", KeyRole.READ).key();
        ServiceSettings settings = new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(5), NO_POLLING);
        asking = new Service(settings, new KeyRing(settings.retryAfterSeconds()), db);
        other = new Service(settings, new KeyRing(settings.retryAfterSeconds()), db);
        admin = new ApiClient(asking.start(), adminKey);
        otherReader = new ApiClient(other.start(), readKey);
    }

    @AfterAll
    static void stop() {
        asking.close();
        other.close();
        db.close();
    }

    @Test
    void an_erased_user_is_gone_from_the_database_and_served_as_unknown_by_every_service() throws Exception {
        HttpResponse<String> wrote = admin.postJson("/v1/trust", "[{\"truster\": \"ana\", \"trustee\": \"ben\"},"
                + " {\"truster\": \"cy\", \"trustee\": \"ana\"}]");
        assertEquals(202, wrote.statusCode(), wrote.body());
        assertEquals("model", strategy(admin, "ana"));
        assertEquals("model", strategy(otherReader, "ana"));

        HttpResponse<String> erased = admin.send("DELETE", "/v1/users/ana");
        assertEquals(204, erased.statusCode(), erased.body());
        assertEquals("", erased.body());

        // committed before the 204: an auditor's queries over every table that holds users
        assertEquals(0, count("select count(*) from users where external_id = 'ana'"));
        assertEquals(0, count("select count(*) from ratings r where not exists (select 1 from users u"
                + " where u.idx = r.user_idx)"));
        assertEquals(0, count("select count(*) from trust t where not exists (select 1 from users u"
                + " where u.idx = t.truster_idx) or not exists (select 1 from users u where u.idx = t.trustee_idx)"));
        assertEquals(0, count("select count(*) from model_user_factors f where not exists (select 1 from users u"
                + " where u.idx = f.user_idx)"));
        assertEquals(0, count("select count(*) from trust t join users u on u.idx = t.truster_idx"
                + " where u.external_id = 'cy'"), "cy's edge to ana went with ana; cy trusts nobody else");

        assertEquals("popular", strategy(admin, "ana"), "the asking service drops her at once");
        Await.until("the other service drops her", WAIT, () -> "popular".equals(strategy(otherReader, "ana")));
        assertEquals("model", strategy(otherReader, "ben"), "nobody else is touched");

        HttpResponse<String> again = admin.send("DELETE", "/v1/users/ana");
        assertEquals(404, again.statusCode(), again.body());
        assertEquals(ProblemType.NOT_FOUND.uri(), ApiClient.json(again).path("type").asText());
    }

    private static String strategy(ApiClient api, String user) {
        HttpResponse<String> r = api.get("/v1/users/" + user + "/recommendations?count=2");
        assertEquals(200, r.statusCode(), r.body());
        return ApiClient.json(r).path("strategy").asText();
    }

    private static long count(String sql) throws SQLException {
        try (Connection c = db.dataSource().getConnection(); PreparedStatement ps = c.prepareStatement(sql);
                ResultSet rs = ps.executeQuery()) {
            rs.next();
            return rs.getLong(1);
        }
    }
}
