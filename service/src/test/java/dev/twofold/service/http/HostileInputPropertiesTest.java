package dev.twofold.service.http;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assertions.fail;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.service.Service;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.testing.KitchenDatabase;
import dev.twofold.service.testing.RawHttp;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.PreparedStatement;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Statement;
import java.time.Duration;
import java.util.List;
import net.jqwik.api.Arbitraries;
import net.jqwik.api.Arbitrary;
import net.jqwik.api.Combinators;
import net.jqwik.api.ForAll;
import net.jqwik.api.Property;
import net.jqwik.api.Provide;
import net.jqwik.api.lifecycle.AfterContainer;
import net.jqwik.api.lifecycle.BeforeContainer;

/**
 * Whatever a client sends — random ids (any UTF-16 text, half surrogate pairs included), raw
 * request targets with bad escapes, dot segments and bytes that are not UTF-8, random counts,
 * random bodies, random JSON of every shape with NaN, Infinity, huge numbers and wrong types — the
 * service answers with a valid answer or a 4xx RFC 9457 problem, never a 5xx; a refused write
 * leaves every table as it was, and an accepted one is in the database. Real server, real
 * PostgreSQL, jqwik with a fixed seed; the access policy is {@link AccessPolicy#OPEN} so the
 * properties are about input, not keys.
 */
class HostileInputPropertiesTest {

    private static final ObjectMapper JSON = new ObjectMapper();
    private static final String SEED = "20261201";
    /** Ids and fragments an attacker tries first. */
    private static final List<String> NASTY_IDS = List.of("..", ".", "../../etc/passwd", "..\\..\\windows", "'; drop table ratings; --",
            "\" or 1=1 --", "ana", "ana ", " ana", "ana\u0000", "a\u0000b", "%00", "%2e%2e", "\uFEFFana", "x".repeat(128),
            "x".repeat(129), "\uD83C\uDF72".repeat(128), "\uD83C\uDF72".repeat(129), "a\uD800", "\uDC00b", "é", "a/b",
            "a?b#c", "a;b", "a,b", "${jndi:ldap://127.0.0.1/x}", "<script>alert(1)</script>", "\\N", "\t", "\r\n");

    private static Path dir;
    private static Database db;
    private static Service service;
    private static int port;

    @BeforeContainer
    static void start() throws IOException {
        dir = Files.createTempDirectory("twofold-hostile-");
        db = TestDatabases.fresh();
        KitchenDatabase.importRatings(db, dir);
        KitchenDatabase.publishModel(db);
        service = new Service(new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(5), Duration.ofHours(1)),
                AccessPolicy.OPEN, db);
        port = service.start();
    }

    @AfterContainer
    static void stop() throws IOException {
        service.close();
        db.close();
        Files.deleteIfExists(dir.resolve("kitchen-ratings.csv"));
        Files.deleteIfExists(dir);
    }

    // ---- path and query parameters -------------------------------------------------------------

    @Property(tries = 400, seed = SEED)
    void any_user_id_count_and_exclusion_gets_recommendations_or_a_4xx_problem(
            @ForAll("ids") String user, @ForAll("counts") String count, @ForAll("ids") String excluded) {
        String target = "/v1/users/" + encode(user) + "/recommendations" + (count == null ? "" : "?count=" + encode(count))
                + (count == null ? "?" : "&") + "exclude=" + encode(excluded);
        RawHttp.Response response = get(target);
        JsonNode body = assertAnswerOrProblem(response, 200);
        if (response.status() == 200) {
            assertEquals(asSent(user), body.path("user").asText(), "the id comes back as it was sent");
            assertTrue(body.path("items").size() <= 1000);
        }
    }

    @Property(tries = 300, seed = SEED)
    void any_item_id_and_count_gets_similar_items_or_a_4xx_problem(@ForAll("ids") String item, @ForAll("counts") String count) {
        RawHttp.Response response = get("/v1/items/" + encode(item) + "/similar" + (count == null ? "" : "?count=" + encode(count)));
        JsonNode body = assertAnswerOrProblem(response, 200);
        if (response.status() == 200) {
            assertEquals(asSent(item), body.path("item").asText());
        }
    }

    @Property(tries = 400, seed = SEED)
    void any_request_target_bytes_get_an_answer_or_a_4xx_problem(@ForAll("targets") byte[] target) {
        RawHttp.Response response = RawHttp.exchange(port, "GET", target, null, null);
        assertTrue(response.status() < 500, () -> "5xx for " + new String(target, StandardCharsets.ISO_8859_1) + ": "
                + response.status() + " " + response.bodyText());
        if (response.status() >= 400) {
            assertProblem(response);
        }
    }

    // ---- bodies ----------------------------------------------------------------------------------

    @Property(tries = 400, seed = SEED)
    void any_prediction_body_gets_predictions_or_a_4xx_problem(@ForAll("predictionBodies") byte[] body) {
        RawHttp.Response response = post("/v1/predictions", body);
        JsonNode answer = assertAnswerOrProblem(response, 200);
        if (response.status() == 200) {
            assertEquals(tree(body).path("pairs").size(), answer.path("predictions").size());
        }
    }

    @Property(tries = 300, seed = SEED)
    void any_ratings_body_is_committed_whole_or_refused_with_a_4xx_and_nothing_written(
            @ForAll("ratingBodies") byte[] body) throws SQLException {
        String before = tableCounts();
        RawHttp.Response response = post("/v1/ratings", body);
        assertAnswerOrProblem(response, 202);
        if (response.status() == 202) {
            for (JsonNode row : tree(body)) {
                assertTrue(rated(row.path("user").asText(), row.path("item").asText()),
                        () -> "accepted but not stored: " + row);
            }
        } else {
            assertEquals(before, tableCounts(), "a refused batch wrote nothing");
        }
    }

    @Property(tries = 200, seed = SEED)
    void any_trust_body_is_committed_whole_or_refused_with_a_4xx_and_nothing_written(
            @ForAll("trustBodies") byte[] body) throws SQLException {
        String before = tableCounts();
        RawHttp.Response response = post("/v1/trust", body);
        assertAnswerOrProblem(response, 202);
        if (response.status() != 202) {
            assertEquals(before, tableCounts(), "a refused batch wrote nothing");
        }
    }

    // ---- generators ------------------------------------------------------------------------------

    @Provide
    Arbitrary<String> ids() {
        return Arbitraries.frequencyOf(
                net.jqwik.api.Tuple.of(3, Arbitraries.strings().all().ofMinLength(0).ofMaxLength(140)),
                net.jqwik.api.Tuple.of(3, Arbitraries.strings().withChars("/.%\\'\";- \t\n\u0000,?#&=+é\uFEFF~_").ofMaxLength(16)),
                net.jqwik.api.Tuple.of(2, Arbitraries.strings().alpha().numeric().ofMinLength(1).ofMaxLength(12)),
                net.jqwik.api.Tuple.of(3, Arbitraries.of(NASTY_IDS)));
    }

    /** A count as sent: null (absent) or any text, numbers around the limits most often. */
    @Provide
    Arbitrary<String> counts() {
        return Arbitraries.frequencyOf(
                net.jqwik.api.Tuple.of(1, Arbitraries.just((String) null)),
                net.jqwik.api.Tuple.of(4, Arbitraries.integers().between(-5, 1_005).map(String::valueOf)),
                net.jqwik.api.Tuple.of(2, Arbitraries.longs().map(String::valueOf)),
                net.jqwik.api.Tuple.of(2, Arbitraries.of("", " 5", "5 ", "+5", "1e3", "0x10", "10.0", "NaN", "Infinity",
                        "99999999999999999999999", "-0", "１０", "5;drop", "5&count=6")),
                net.jqwik.api.Tuple.of(1, Arbitraries.strings().all().ofMaxLength(12)));
    }

    /** Raw request targets: known tricks and random printable and non-UTF-8 bytes after an API prefix. */
    @Provide
    Arbitrary<byte[]> targets() {
        Arbitrary<String> prefix = Arbitraries.of("/v1/users/", "/v1/items/", "/v1/models/", "/", "/v1/", "/health/",
                "/v1/users/ana/recommendations?exclude=", "/v1/users/ana/recommendations?count=");
        Arbitrary<String> tricks = Arbitraries.of("..", "../..", "%2e%2e", "%2E%2E%2F", "..%2F..%2Fv1%2Fmodels", "%", "%z", "%zz",
                "%ff%fe", "%c0%ae%c0%ae", "%ed%a0%80", "%00", ";x=1", "//", "%2F", "\\", "a b", "%u002e", "?", "#", "*",
                "/recommendations", "/similar", "/promote", "rollback", "users/ana/recommendations");
        Arbitrary<byte[]> randomBytes = Arbitraries.bytes().between((byte) 0x21, (byte) 0x7e).array(byte[].class).ofMaxSize(24);
        Arbitrary<byte[]> highBytes = Arbitraries.bytes().array(byte[].class).ofMaxSize(8).map(HostileInputPropertiesTest::noSpaceOrLineEnd);
        Arbitrary<byte[]> tail = Arbitraries.oneOf(tricks.map(t -> t.getBytes(StandardCharsets.ISO_8859_1)), randomBytes, highBytes);
        return Combinators.combine(prefix, tail, tail).as((p, a, b) -> concat(p.getBytes(StandardCharsets.ISO_8859_1), a, b));
    }

    @Provide
    Arbitrary<byte[]> predictionBodies() {
        Arbitrary<String> pair = Combinators.combine(jsonString(), jsonString(), Arbitraries.of("user", "item", "users", "pairs"))
                .as((u, i, extra) -> "{\"user\":" + u + ",\"item\":" + i + "}");
        Arbitrary<String> valid = pair.list().ofMaxSize(6).map(ps -> "{\"pairs\":[" + String.join(",", ps) + "]}");
        return bodies(valid, Arbitraries.of("pairs", "user", "item"));
    }

    @Provide
    Arbitrary<byte[]> ratingBodies() {
        Arbitrary<String> row = Combinators.combine(plainId(), plainId(), rating(), time())
                .as((u, i, r, t) -> "{\"user\":\"" + u + "\",\"item\":\"" + i + "\",\"rating\":" + r + (t == null ? "" : ",\"time\":" + t) + "}");
        Arbitrary<String> valid = row.list().ofMinSize(1).ofMaxSize(5).map(rows -> "[" + String.join(",", rows) + "]");
        return bodies(valid, Arbitraries.of("user", "item", "rating", "time"));
    }

    @Provide
    Arbitrary<byte[]> trustBodies() {
        Arbitrary<String> row = Combinators.combine(plainId(), plainId(), weight())
                .as((a, b, w) -> "{\"truster\":\"" + a + "\",\"trustee\":\"" + b + "\"" + (w == null ? "" : ",\"weight\":" + w) + "}");
        Arbitrary<String> valid = row.list().ofMinSize(1).ofMaxSize(5).map(rows -> "[" + String.join(",", rows) + "]");
        return bodies(valid, Arbitraries.of("truster", "trustee", "weight"));
    }

    /** Valid bodies, the same with one byte changed, cut short or grown, random JSON of any shape, random bytes. */
    private static Arbitrary<byte[]> bodies(Arbitrary<String> valid, Arbitrary<String> fields) {
        Arbitrary<byte[]> exact = valid.map(s -> s.getBytes(StandardCharsets.UTF_8));
        Arbitrary<byte[]> mutated = Combinators.combine(exact, Arbitraries.integers().between(0, 1_000_000),
                Arbitraries.bytes(), Arbitraries.integers().between(0, 3)).as(HostileInputPropertiesTest::mutate);
        Arbitrary<byte[]> shapes = jsonValue(fields, 4).map(s -> s.getBytes(StandardCharsets.UTF_8));
        Arbitrary<byte[]> noise = Arbitraries.bytes().array(byte[].class).ofMaxSize(64);
        return Arbitraries.frequencyOf(net.jqwik.api.Tuple.of(3, exact), net.jqwik.api.Tuple.of(4, mutated),
                net.jqwik.api.Tuple.of(3, shapes), net.jqwik.api.Tuple.of(1, noise));
    }

    /** Any JSON value (and some that are not JSON: NaN, Infinity, hex), nested up to {@code depth}. */
    private static Arbitrary<String> jsonValue(Arbitrary<String> fields, int depth) {
        Arbitrary<String> scalar = Arbitraries.oneOf(jsonString(), number(), Arbitraries.of("true", "false", "null"));
        if (depth == 0) {
            return scalar;
        }
        Arbitrary<String> inner = Arbitraries.lazy(() -> jsonValue(fields, depth - 1));
        Arbitrary<String> array = inner.list().ofMaxSize(4).map(vs -> "[" + String.join(",", vs) + "]");
        Arbitrary<String> key = Arbitraries.oneOf(fields, jsonString().map(s -> s.substring(1, s.length() - 1)));
        Arbitrary<String> member = Combinators.combine(key, inner).as((k, v) -> "\"" + k + "\":" + v);
        Arbitrary<String> object = member.list().ofMaxSize(5).map(ms -> "{" + String.join(",", ms) + "}");
        return Arbitraries.frequencyOf(net.jqwik.api.Tuple.of(2, scalar), net.jqwik.api.Tuple.of(2, array),
                net.jqwik.api.Tuple.of(3, object));
    }

    private static Arbitrary<String> number() {
        return Arbitraries.oneOf(
                Arbitraries.of("4", "3.5", "0", "-0", "1e400", "-1e400", "1e-400", "NaN", "Infinity", "-Infinity", "0x10",
                        "99999999999999999999999999", "5.000000000000000000001", "1E2", "01", ".5", "+1", "1" + "0".repeat(2000)),
                Arbitraries.doubles().map(d -> Double.isFinite(d) ? Double.toString(d) : "1"),
                Arbitraries.longs().map(String::valueOf));
    }

    /** A JSON string literal: any text, escaped; half surrogate pairs and control characters as \\u escapes. */
    private static Arbitrary<String> jsonString() {
        return Arbitraries.oneOf(Arbitraries.strings().all().ofMaxLength(20), Arbitraries.of(NASTY_IDS))
                .map(HostileInputPropertiesTest::quote);
    }

    /** Ids that are mostly valid, so write properties reach the database often. */
    private static Arbitrary<String> plainId() {
        return Arbitraries.oneOf(Arbitraries.of("ana", "ben", "new-cook", "soup", "pie", "crème brûlée", "'; drop table ratings; --",
                "../../etc/passwd", "a,b", "\\\\N", "\uD83C\uDF72"), Arbitraries.strings().alpha().ofMinLength(1).ofMaxLength(8));
    }

    private static Arbitrary<String> rating() {
        return Arbitraries.oneOf(Arbitraries.of("1", "5", "3.5", "4.25", "2"), number());
    }

    private static Arbitrary<String> time() {
        return Arbitraries.oneOf(Arbitraries.just((String) null),
                Arbitraries.of("1714588200", "\"2024-05-01T18:30:00Z\"", "null", "\"yesterday\"", "1e30", "-99999999999999", "[]"));
    }

    private static Arbitrary<String> weight() {
        return Arbitraries.oneOf(Arbitraries.just((String) null), Arbitraries.of("1", "0.5", "0", "1.5", "null", "\"1\""), number());
    }

    // ---- checks ----------------------------------------------------------------------------------

    /** Asserts a {@code success} answer with a JSON body or a 4xx problem; returns the parsed body. */
    private static JsonNode assertAnswerOrProblem(RawHttp.Response response, int success) {
        if (response.status() >= 500) {
            fail("a " + response.status() + ": " + response.bodyText());
        }
        if (response.status() >= 400) {
            return assertProblem(response);
        }
        assertEquals(success, response.status(), response.bodyText());
        return tree(response.body());
    }

    private static JsonNode assertProblem(RawHttp.Response response) {
        String type = String.valueOf(response.header("Content-Type"));
        assertTrue(type.startsWith("application/problem+json"), () -> response.status() + " as " + type + ": " + response.bodyText());
        JsonNode problem = tree(response.body());
        assertEquals(response.status(), problem.path("status").asInt(), response.bodyText());
        assertFalse(problem.path("type").asText().isBlank(), response.bodyText());
        assertFalse(problem.path("title").asText().isBlank(), response.bodyText());
        assertFalse(problem.path("detail").asText().isBlank(), response.bodyText());
        assertTrue(validText(problem.path("detail").asText()), () -> "the detail quotes half a character: " + response.bodyText());
        return problem;
    }

    private static JsonNode tree(byte[] body) {
        try {
            return JSON.readTree(body);
        } catch (IOException e) {
            throw new AssertionError("not JSON: " + new String(body, StandardCharsets.UTF_8), e);
        }
    }

    /** Whether the text has no half surrogate pair (so it has a UTF-8 form and any JSON reader takes it). */
    private static boolean validText(String s) {
        return s.equals(asSent(s));
    }

    /** Row counts of the tables a write touches. */
    private static String tableCounts() throws SQLException {
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement();
             ResultSet rs = s.executeQuery("select (select count(*) from ratings) || ' ' || (select count(*) from trust) || ' '"
                     + " || (select count(*) from users) || ' ' || (select count(*) from items)")) {
            rs.next();
            return rs.getString(1);
        }
    }

    private static boolean rated(String user, String item) throws SQLException {
        try (Connection c = db.dataSource().getConnection(); PreparedStatement ps = c.prepareStatement("select count(*) from ratings r"
                + " join users u on u.idx = r.user_idx join items i on i.idx = r.item_idx where u.external_id = ? and i.external_id = ?")) {
            ps.setString(1, user);
            ps.setString(2, item);
            try (ResultSet rs = ps.executeQuery()) {
                rs.next();
                return rs.getLong(1) == 1;
            }
        }
    }

    // ---- plumbing --------------------------------------------------------------------------------

    private static RawHttp.Response get(String target) {
        return RawHttp.exchange(port, "GET", target.getBytes(StandardCharsets.US_ASCII), null, null);
    }

    private static RawHttp.Response post(String path, byte[] body) {
        return RawHttp.exchange(port, "POST", path.getBytes(StandardCharsets.US_ASCII), "application/json", body);
    }

    /** Percent-encodes the UTF-8 bytes of every character but the unreserved ones (RFC 3986 §2.3). */
    private static String encode(String text) {
        StringBuilder out = new StringBuilder();
        for (byte b : text.getBytes(StandardCharsets.UTF_8)) {
            int c = b & 0xff;
            if ((c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') || c == '-' || c == '.' || c == '_' || c == '~') {
                out.append((char) c);
            } else {
                out.append('%').append(Character.toUpperCase(Character.forDigit(c >> 4, 16)))
                        .append(Character.toUpperCase(Character.forDigit(c & 0xf, 16)));
            }
        }
        return out.toString();
    }

    /** The text a URL can carry: half a surrogate pair has no UTF-8 form and goes as '?'. */
    private static String asSent(String text) {
        return new String(text.getBytes(StandardCharsets.UTF_8), StandardCharsets.UTF_8);
    }

    private static String quote(String text) {
        StringBuilder out = new StringBuilder("\"");
        for (int i = 0; i < text.length(); i++) {
            char c = text.charAt(i);
            if (c == '"' || c == '\\') {
                out.append('\\').append(c);
            } else if (c < 0x20 || Character.isSurrogate(c)) {
                out.append(String.format("\\u%04x", (int) c));
            } else {
                out.append(c);
            }
        }
        return out.append('"').toString();
    }

    private static byte[] mutate(byte[] body, int where, byte value, int how) {
        if (body.length == 0) {
            return body;
        }
        int at = where % body.length;
        ByteArrayOutputStream out = new ByteArrayOutputStream();
        switch (how) {
            case 0 -> { // replace one byte
                out.write(body, 0, at);
                out.write(value);
                out.write(body, at + 1, body.length - at - 1);
            }
            case 1 -> out.write(body, 0, at); // cut short
            case 2 -> { // insert one byte
                out.write(body, 0, at);
                out.write(value);
                out.write(body, at, body.length - at);
            }
            default -> { // drop one byte
                out.write(body, 0, at);
                out.write(body, at + 1, body.length - at - 1);
            }
        }
        return out.toByteArray();
    }

    private static byte[] noSpaceOrLineEnd(byte[] bytes) {
        byte[] out = bytes.clone();
        for (int i = 0; i < out.length; i++) {
            if (out[i] == ' ' || out[i] == '\r' || out[i] == '\n' || out[i] == 0) {
                out[i] = (byte) 0xe9;
            }
        }
        return out;
    }

    private static byte[] concat(byte[]... parts) {
        ByteArrayOutputStream out = new ByteArrayOutputStream();
        for (byte[] p : parts) {
            out.write(p, 0, p.length);
        }
        return out.toByteArray();
    }
}
