package dev.twofold.service.access;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.access.ApiKeys;
import dev.twofold.db.access.KeyRole;
import dev.twofold.service.http.ProblemException;
import dev.twofold.service.http.ProblemType;
import dev.twofold.service.http.Role;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;

/** The in-memory key check: who is admitted to what, and what a refusal says. */
class KeyRingTest {

    private static final ApiKeys.LiveKey READER = live(1, "shop-reader", KeyRole.READ, "tf_reader");
    private static final ApiKeys.LiveKey WRITER = live(2, "shop-writer", KeyRole.WRITE, "tf_writer");
    private static final ApiKeys.LiveKey ADMIN = live(3, "ops", KeyRole.ADMIN, "tf_admin");

    @Test
    void each_role_includes_the_ones_below_it_and_no_more() {
        KeyRing ring = ring(READER, WRITER, ADMIN);
        String[] keys = {"tf_reader", "tf_writer", "tf_admin"};
        Role[] routes = {Role.READ, Role.WRITE, Role.ADMIN};
        for (int k = 0; k < keys.length; k++) {
            for (int r = 0; r < routes.length; r++) {
                if (k >= r) {
                    assertEquals(k + 1, ring.check("Bearer " + keys[k], routes[r]).id);
                } else {
                    int key = k;
                    int route = r;
                    ProblemException refused = assertThrows(ProblemException.class,
                            () -> ring.check("Bearer " + keys[key], routes[route]));
                    assertEquals(ProblemType.FORBIDDEN, refused.type());
                    assertTrue(refused.headers().isEmpty(), "403 carries no challenge");
                }
            }
        }
    }

    @Test
    void a_one_key_ring_admits_that_key_in_its_role_and_nothing_else() {
        KeyRing ring = KeyRing.only("tf_one-off", "warm-up", KeyRole.READ);
        assertTrue(ring.ready());
        assertEquals("warm-up", ring.check("Bearer tf_one-off", Role.READ).name);
        assertEquals(ProblemType.FORBIDDEN,
                assertThrows(ProblemException.class, () -> ring.check("Bearer tf_one-off", Role.WRITE)).type());
        for (String other : new String[] {null, "Bearer tf_one-of", "Bearer tf_one-off2", "tf_one-off"}) {
            assertEquals(ProblemType.UNAUTHORIZED,
                    assertThrows(ProblemException.class, () -> ring.check(other, Role.READ)).type(), other);
        }
    }

    @Test
    void a_refusal_says_which_key_which_role_and_what_was_needed() {
        ProblemException refused = assertThrows(ProblemException.class,
                () -> ring(READER).check("Bearer tf_reader", Role.WRITE));
        assertEquals("the API key 'shop-reader' has the role read; this route needs write or higher (admin includes"
                + " write, write includes read)", refused.detail());
    }

    @Test
    void missing_malformed_and_unknown_keys_are_401_with_a_bearer_challenge() {
        List<KeyRing.Refusal> seen = new ArrayList<>();
        KeyRing ring = ring(READER);
        ring.onRefusal(seen::add);
        for (String header : new String[] {null, "", "  ", "Bearer", "Bearer   ", "Basic dXNlcjpwYXNz", "tf_reader",
                "Bearer tf_unknown", "Bearer tf_reader2", "Bearer TF_READER"}) {
            ProblemException refused = assertThrows(ProblemException.class, () -> ring.check(header, Role.READ),
                    String.valueOf(header));
            assertEquals(ProblemType.UNAUTHORIZED, refused.type(), header);
            assertTrue(refused.headers().get("WWW-Authenticate").startsWith("Bearer realm=\"twofold\""), header);
        }
        assertEquals(List.of(KeyRing.Refusal.MISSING, KeyRing.Refusal.MISSING, KeyRing.Refusal.MISSING,
                KeyRing.Refusal.MISSING, KeyRing.Refusal.MISSING, KeyRing.Refusal.MALFORMED, KeyRing.Refusal.MALFORMED,
                KeyRing.Refusal.INVALID, KeyRing.Refusal.INVALID, KeyRing.Refusal.INVALID), seen);
        ProblemException unknown = assertThrows(ProblemException.class, () -> ring.check("Bearer tf_x", Role.READ));
        // RFC 6750 §3.1: a token that is not valid is answered with error="invalid_token"
        assertEquals("Bearer realm=\"twofold\", error=\"invalid_token\"", unknown.headers().get("WWW-Authenticate"));
    }

    @Test
    void before_the_keys_are_read_nothing_is_admitted_and_the_answer_is_try_again_later() {
        KeyRing ring = new KeyRing(3);
        assertFalse(ring.ready());
        ProblemException notYet = assertThrows(ProblemException.class, () -> ring.check("Bearer tf_admin", Role.READ));
        assertEquals(ProblemType.DATABASE_UNAVAILABLE, notYet.type());
        assertEquals("3", notYet.headers().get("Retry-After"));
        ring.replace(List.of());
        assertTrue(ring.ready(), "read once, even if there are no keys yet");
        assertEquals(ProblemType.UNAUTHORIZED,
                assertThrows(ProblemException.class, () -> ring.check("Bearer tf_admin", Role.READ)).type());
    }

    @Test
    void a_key_missing_from_a_reload_stops_working_and_one_that_stays_keeps_its_uses() {
        KeyRing ring = ring(READER, WRITER);
        KeyRing.Entry writer = ring.check("Bearer tf_writer", Role.WRITE);
        ring.replace(List.of(WRITER));
        assertSame(writer, ring.check("Bearer tf_writer", Role.READ), "the entry and its uses survive the reload");
        assertThrows(ProblemException.class, () -> ring.check("Bearer tf_reader", Role.READ));
        Map<Long, Instant> uses = ring.takeUses();
        assertEquals(List.of(2L), List.copyOf(uses.keySet()));
        assertTrue(ring.takeUses().isEmpty(), "a use is collected once");
        ring.notRecorded(uses);
        assertEquals(uses, ring.takeUses(), "uses that could not be stored come again in the next batch");
    }

    @Test
    void a_key_whose_role_changed_in_the_store_is_checked_with_the_new_role() {
        KeyRing ring = ring(ADMIN);
        ring.check("Bearer tf_admin", Role.ADMIN);
        ring.replace(List.of(live(3, "ops", KeyRole.READ, "tf_admin")));
        assertThrows(ProblemException.class, () -> ring.check("Bearer tf_admin", Role.ADMIN));
    }

    private static KeyRing ring(ApiKeys.LiveKey... keys) {
        KeyRing ring = new KeyRing(1);
        ring.replace(List.of(keys));
        return ring;
    }

    private static ApiKeys.LiveKey live(long id, String name, KeyRole role, String key) {
        return new ApiKeys.LiveKey(id, name, role, ApiKeys.hash(key));
    }
}
