package dev.twofold.db.access;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.BadInputException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.sql.Connection;
import java.sql.ResultSet;
import java.sql.Statement;
import java.time.Instant;
import java.util.HexFormat;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.postgresql.PGConnection;
import org.postgresql.PGNotification;
import picocli.CommandLine;

class ApiKeysTest {

    static Database database;
    static ApiKeys keys;

    @BeforeAll
    static void open() {
        database = TestDatabases.fresh();
        keys = new ApiKeys(database);
    }

    @AfterAll
    static void close() {
        database.close();
    }

    @Test
    void the_stored_hash_is_sha256_of_the_key() {
        // FIPS 180-2, Appendix B.1: SHA-256("abc")
        assertEquals("ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad",
                HexFormat.of().formatHex(ApiKeys.hash("abc")));
        ApiKeys.Created created = keys.create("hash-check", KeyRole.READ);
        ApiKeys.LiveKey live = keys.live().stream().filter(k -> k.name().equals("hash-check")).findFirst().orElseThrow();
        assertArrayEquals(ApiKeys.hash(created.key()), live.hash());
    }

    @Test
    void a_key_is_shown_once_and_never_stored_in_plain() throws Exception {
        ApiKeys.Created created = keys.create("plain-check", KeyRole.WRITE);
        assertTrue(created.key().startsWith(ApiKeys.PREFIX));
        assertEquals(ApiKeys.PREFIX.length() + 43, created.key().length(), "256 bits in base64url without padding");
        assertFalse(created.toString().contains(created.key()), "toString hides the key");
        try (Connection c = database.dataSource().getConnection(); Statement s = c.createStatement();
                ResultSet rs = s.executeQuery("select api_keys::text from api_keys")) {
            while (rs.next()) {
                assertFalse(rs.getString(1).contains(created.key().substring(ApiKeys.SHOWN_CHARS)),
                        "no row holds the secret part of the key");
            }
        }
    }

    @Test
    void two_keys_are_never_the_same() {
        assertFalse(ApiKeys.generate().equals(ApiKeys.generate()));
    }

    @Test
    void a_live_name_cannot_be_taken_twice_but_a_revoked_one_can() {
        keys.create("backend", KeyRole.READ);
        BadInputException taken = assertThrows(BadInputException.class, () -> keys.create("backend", KeyRole.ADMIN));
        assertTrue(taken.getMessage().contains("already named 'backend'"), taken.getMessage());
        assertTrue(keys.revoke("backend"));
        assertNotNull(keys.create("backend", KeyRole.ADMIN));
        assertEquals(2, keys.list().stream().filter(k -> k.name().equals("backend")).count());
    }

    @Test
    void bad_names_are_refused_with_the_reason() {
        assertThrows(BadInputException.class, () -> keys.create("", KeyRole.READ));
        assertThrows(BadInputException.class, () -> keys.create("x".repeat(ApiKeys.MAX_NAME_LENGTH + 1), KeyRole.READ));
        BadInputException control = assertThrows(BadInputException.class, () -> keys.create("a\nb", KeyRole.READ));
        assertTrue(control.getMessage().contains("position 2"), control.getMessage());
    }

    @Test
    void revoking_drops_the_key_from_the_live_set_and_notifies_services() throws Exception {
        ApiKeys.Created created = keys.create("to-revoke", KeyRole.READ);
        try (Connection listener = database.dataSource().getConnection()) {
            try (Statement s = listener.createStatement()) {
                s.execute("listen " + ApiKeys.NOTIFY_CHANNEL);
            }
            assertTrue(keys.revoke("to-revoke"));
            assertFalse(keys.revoke("to-revoke"), "revoking twice finds no live key");
            PGNotification[] notes = listener.unwrap(PGConnection.class).getNotifications(5_000);
            assertNotNull(notes);
            assertEquals(ApiKeys.NOTIFY_CHANNEL, notes[0].getName());
        }
        assertTrue(keys.live().stream().noneMatch(k -> k.id() == created.stored().id()));
        ApiKey listed = keys.list().stream().filter(k -> k.id() == created.stored().id()).findFirst().orElseThrow();
        assertFalse(listed.live());
        assertNotNull(listed.revokedAt());
    }

    @Test
    void creating_notifies_services_and_a_refused_name_does_not() throws Exception {
        try (Connection listener = database.dataSource().getConnection()) {
            try (Statement s = listener.createStatement()) {
                s.execute("listen " + ApiKeys.NOTIFY_CHANNEL);
            }
            PGConnection pg = listener.unwrap(PGConnection.class);
            keys.create("announced", KeyRole.WRITE);
            PGNotification[] notes = pg.getNotifications(5_000);
            assertNotNull(notes);
            assertEquals("created", notes[0].getParameter());
            assertThrows(BadInputException.class, () -> keys.create("announced", KeyRole.READ));
            PGNotification[] none = pg.getNotifications(200);
            assertTrue(none == null || none.length == 0, "nothing was created, nothing is announced");
        }
    }

    @Test
    void use_is_recorded_and_never_moves_back() {
        ApiKeys.Created created = keys.create("used", KeyRole.READ);
        assertNull(created.stored().lastUsedAt());
        Instant later = Instant.parse("2026-11-30T10:00:00Z");
        keys.recordUse(Map.of(created.stored().id(), later));
        keys.recordUse(Map.of(created.stored().id(), later.minusSeconds(3600)));
        ApiKey listed = keys.list().stream().filter(k -> k.id() == created.stored().id()).findFirst().orElseThrow();
        assertEquals(later, listed.lastUsedAt());
    }

    @Test
    void roles_are_ordered_admin_over_write_over_read() {
        assertTrue(KeyRole.ADMIN.allows(KeyRole.WRITE));
        assertTrue(KeyRole.WRITE.allows(KeyRole.READ));
        assertFalse(KeyRole.READ.allows(KeyRole.WRITE));
        assertFalse(KeyRole.WRITE.allows(KeyRole.ADMIN));
        IllegalArgumentException bad = assertThrows(IllegalArgumentException.class, () -> KeyRole.parse("root"));
        assertTrue(bad.getMessage().contains("read, write, admin"));
    }

    @Test
    void the_command_prints_the_key_once_lists_and_revokes() {
        Map<String, String> env = TestDatabases.environment(database);
        StringWriter out = new StringWriter();
        StringWriter err = new StringWriter();
        int code = new CommandLine(new KeysCommand(env)).setOut(new PrintWriter(out)).setErr(new PrintWriter(err))
                .execute("create", "--role", "admin", "--name", "ops-laptop");
        assertEquals(0, code, err.toString());
        String key = out.toString().trim();
        assertTrue(key.startsWith(ApiKeys.PREFIX), out.toString());
        assertTrue(err.toString().contains("shown only this once"));

        StringWriter listed = new StringWriter();
        assertEquals(0, new CommandLine(new KeysCommand(env)).setOut(new PrintWriter(listed)).execute("list"));
        assertTrue(listed.toString().contains("ops-laptop"));
        assertTrue(listed.toString().contains("admin"));
        assertFalse(listed.toString().contains(key), "list never shows a whole key");

        assertEquals(0, new CommandLine(new KeysCommand(env)).setOut(new PrintWriter(new StringWriter()))
                .execute("revoke", "ops-laptop"));
        assertEquals(2, new CommandLine(new KeysCommand(env)).setErr(new PrintWriter(new StringWriter()))
                .execute("create", "--role", "root", "--name", "x"), "a bad role is a usage error");
        List<ApiKey> all = keys.list();
        assertTrue(all.stream().anyMatch(k -> k.name().equals("ops-laptop") && !k.live()));
    }
}
