package dev.twofold.service.access;

import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.access.ApiKey;
import dev.twofold.db.access.ApiKeys;
import dev.twofold.db.access.KeyRole;
import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.service.http.ProblemException;
import dev.twofold.service.http.Role;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/** Following the key store in a real PostgreSQL: reloads, and last-use times written in batches. */
class KeyFollowerTest {

    private static Database db;

    @BeforeAll
    static void open() {
        db = TestDatabases.fresh();
    }

    @AfterAll
    static void close() {
        db.close();
    }

    @Test
    void a_reload_takes_up_new_keys_and_drops_revoked_ones() {
        ApiKeys store = new ApiKeys(db);
        String kept = store.create("follow-kept", KeyRole.READ).key();
        String dropped = store.create("follow-dropped", KeyRole.READ).key();
        KeyRing ring = new KeyRing(1);
        List<String> lost = new ArrayList<>();
        try (KeyFollower follower = new KeyFollower(ring, store, Duration.ofHours(1), lost::add)) {
            follower.reload();
            ring.check("Bearer " + kept, Role.READ);
            ring.check("Bearer " + dropped, Role.READ);
            store.revoke("follow-dropped");
            String added = store.create("follow-added", KeyRole.ADMIN).key();
            follower.reload();
            ring.check("Bearer " + kept, Role.READ);
            ring.check("Bearer " + added, Role.ADMIN);
            assertThrows(ProblemException.class, () -> ring.check("Bearer " + dropped, Role.READ));
        }
        assertTrue(lost.isEmpty(), lost.toString());
    }

    @Test
    void uses_are_written_in_one_batch_and_the_last_batch_at_close() {
        ApiKeys store = new ApiKeys(db);
        String used = store.create("follow-used", KeyRole.WRITE).key();
        store.create("follow-idle", KeyRole.WRITE);
        KeyRing ring = new KeyRing(1);
        Instant before = Instant.now().minusSeconds(1);
        try (KeyFollower follower = new KeyFollower(ring, store, Duration.ofHours(1), reason -> { })) {
            follower.reload();
            ring.check("Bearer " + used, Role.WRITE);
            assertNull(find(store, "follow-used").lastUsedAt(), "not written on the request path");
        }
        Instant recorded = find(store, "follow-used").lastUsedAt();
        assertNotNull(recorded, "written when the follower closed");
        assertTrue(!recorded.isBefore(before) && !recorded.isAfter(Instant.now()), recorded.toString());
        assertNull(find(store, "follow-idle").lastUsedAt());
    }

    private static ApiKey find(ApiKeys store, String name) {
        return store.list().stream().filter(k -> k.name().equals(name) && k.live()).findFirst().orElseThrow();
    }
}
