package dev.twofold.service.ops;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import ch.qos.logback.classic.Level;
import ch.qos.logback.classic.Logger;
import ch.qos.logback.classic.spi.ILoggingEvent;
import ch.qos.logback.core.read.ListAppender;
import dev.twofold.db.access.ApiKeys;
import dev.twofold.db.access.KeyRole;
import dev.twofold.service.Service;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.access.KeyRing;
import dev.twofold.service.http.AccessPolicy;
import dev.twofold.service.testing.ApiClient;
import dev.twofold.service.testing.KitchenModel;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.time.Clock;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.stream.Collectors;
import org.junit.jupiter.api.AfterEach;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.slf4j.LoggerFactory;
import org.slf4j.event.KeyValuePair;

/** Request ids and the request log, on a real server. */
class RequestLogTest {

    private static final String SECRET = "tfk_live_4c1d8e0b9f2a7c3d5e6f708192a3b4c5";

    private Observability ops;
    private Service service;
    private ApiClient api;
    private ListAppender<ILoggingEvent> lines;
    private Logger requestLogger;
    private Level levelBefore;

    @BeforeEach
    void serveAndListen() {
        requestLogger = (Logger) LoggerFactory.getLogger(RequestLog.LOGGER);
        levelBefore = requestLogger.getLevel();
        requestLogger.setLevel(Level.INFO);
        lines = new ListAppender<>();
        lines.start();
        requestLogger.addAppender(lines);
        ops = new Observability(OpsSettings.defaults(), null, Clock.systemUTC());
        service = new Service(new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(10), Duration.ofSeconds(1)),
                AccessPolicy.OPEN, ops);
        api = new ApiClient(service.start());
        service.install(KitchenModel.build());
    }

    @AfterEach
    void stop() {
        service.close();
        ops.close();
        requestLogger.detachAppender(lines);
        requestLogger.setLevel(levelBefore);
    }

    @Test
    void every_response_carries_a_request_id_a_sane_incoming_one_is_kept_and_others_are_replaced() {
        List<String> fresh = new ArrayList<>();
        for (String path : List.of("/v1/users/ana/recommendations", "/v1/users/ana/recommendations?count=0",
                "/no/such/path", "/health/live")) {
            HttpResponse<String> response = api.get(path);
            String id = response.headers().firstValue(RequestLog.HEADER).orElseThrow(() -> new AssertionError(
                    "no " + RequestLog.HEADER + " on " + path + " (" + response.statusCode() + ")"));
            assertTrue(id.matches("[0-9a-f]{16}"), id);
            fresh.add(id);
        }
        assertEquals(fresh.size(), fresh.stream().distinct().count(), "ids repeat: " + fresh);

        for (String sane : List.of("4bf92f3577b34da6a3ce929d0e0e4736", "req-2026.12.01:0042", "a")) {
            assertEquals(sane, idOf(withId("/v1/users/ana/recommendations", sane)));
        }
        for (String insane : List.of("has space", "quote\"d", "x".repeat(RequestLog.MAX_ID_LENGTH + 1), "semi;colon")) {
            String id = idOf(withId("/v1/users/ana/recommendations", insane));
            assertNotEquals(insane, id);
            assertTrue(id.matches("[0-9a-f]{16}"), id);
        }
    }

    @Test
    void each_request_writes_one_line_with_its_id_and_never_the_authorization_header() {
        HttpResponse<String> ok = api.send(HttpRequest.newBuilder(api.uri("/v1/users/ana/recommendations?count=2"))
                .header("Authorization", "Bearer " + SECRET).header(RequestLog.HEADER, "trace-1").GET());
        HttpResponse<String> bad = api.send(HttpRequest.newBuilder(api.uri("/v1/users/ana/recommendations?count=x"))
                .header("Authorization", "Bearer " + SECRET).GET());
        assertEquals(200, ok.statusCode());
        assertEquals(400, bad.statusCode());

        List<ILoggingEvent> events = new ArrayList<>(lines.list);
        assertEquals(2, events.size(), events.stream().map(ILoggingEvent::getFormattedMessage)
                .collect(Collectors.joining("\n")));
        ILoggingEvent first = events.get(0);
        assertEquals(Level.INFO, first.getLevel());
        assertEquals("GET /v1/users/ana/recommendations 200", first.getFormattedMessage().substring(0, 37));
        assertTrue(first.getFormattedMessage().endsWith("ms id=trace-1"), first.getFormattedMessage());
        Map<String, Object> kv = keyValues(first);
        assertEquals("trace-1", kv.get("request_id"));
        assertEquals("/v1/users/{user}/recommendations", kv.get("route"));
        assertEquals(200, kv.get("status"));
        assertEquals("trace-1", first.getMDCPropertyMap().get(RequestLog.MDC_KEY));
        assertFalse(kv.containsKey("problem"), kv.toString());

        ILoggingEvent second = events.get(1);
        String badId = idOf(bad);
        assertTrue(second.getFormattedMessage().contains(" 400 "), second.getFormattedMessage());
        assertTrue(second.getFormattedMessage().endsWith("id=" + badId + " problem=invalid-parameter"),
                second.getFormattedMessage());
        assertEquals("invalid-parameter", keyValues(second).get("problem"));

        for (ILoggingEvent e : events) {
            String everything = e.getFormattedMessage() + keyValues(e) + e.getMDCPropertyMap();
            assertFalse(everything.contains(SECRET.substring(8)), "the key leaked: " + everything);
            assertFalse(everything.contains("Bearer"), everything);
            assertFalse(everything.contains("count="), "the query string was logged: " + everything);
        }
    }

    @Test
    void the_request_line_names_the_key_a_request_was_admitted_with_never_the_key_itself() {
        KeyRing keys = new KeyRing(1);
        keys.replace(List.of(new ApiKeys.LiveKey(7, "bakery-site", KeyRole.READ, ApiKeys.hash(SECRET))));
        try (Observability keyedOps = new Observability(OpsSettings.defaults(), null, Clock.systemUTC());
                Service keyed = new Service(new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(10),
                        Duration.ofSeconds(1)), keys, keyedOps)) {
            ApiClient client = new ApiClient(keyed.start());
            keyed.install(KitchenModel.build());
            lines.list.clear();
            assertEquals(200, client.send(HttpRequest.newBuilder(client.uri("/v1/users/ana/recommendations"))
                    .header("Authorization", "Bearer " + SECRET).GET()).statusCode());
            assertEquals(401, client.send(HttpRequest.newBuilder(client.uri("/v1/users/ana/recommendations"))
                    .header("Authorization", "Bearer tfk_live_not-a-key").GET()).statusCode());
            assertEquals(200, client.get("/health/live").statusCode());

            List<ILoggingEvent> events = new ArrayList<>(lines.list);
            assertEquals(3, events.size());
            assertTrue(events.get(0).getFormattedMessage().contains(" caller=bakery-site"),
                    events.get(0).getFormattedMessage());
            assertEquals("bakery-site", keyValues(events.get(0)).get("caller"));
            for (ILoggingEvent unnamed : events.subList(1, 3)) {
                assertFalse(unnamed.getFormattedMessage().contains("caller="), unnamed.getFormattedMessage());
                assertFalse(keyValues(unnamed).containsKey("caller"), keyValues(unnamed).toString());
            }
            for (ILoggingEvent e : events) {
                String everything = e.getFormattedMessage() + keyValues(e) + e.getMDCPropertyMap();
                assertFalse(everything.contains(SECRET.substring(8)), "the key leaked: " + everything);
            }
        }
    }

    @Test
    void control_characters_in_a_path_cannot_split_a_log_line() {
        assertEquals("/v1/users/a\\u000ab/x", RequestLog.printable("/v1/users/a\nb/x"));
        assertEquals("/\\u005c", RequestLog.printable("/\\"));
        String longPath = "/" + "p".repeat(RequestLog.MAX_PATH_CHARS + 50);
        assertEquals(RequestLog.MAX_PATH_CHARS + 3, RequestLog.printable(longPath).length());
    }

    private HttpResponse<String> withId(String path, String id) {
        return api.send(HttpRequest.newBuilder(api.uri(path)).header(RequestLog.HEADER, id).GET());
    }

    private static String idOf(HttpResponse<String> response) {
        return response.headers().firstValue(RequestLog.HEADER).orElseThrow();
    }

    private static Map<String, Object> keyValues(ILoggingEvent e) {
        Map<String, Object> out = new java.util.LinkedHashMap<>();
        if (e.getKeyValuePairs() != null) {
            for (KeyValuePair kv : e.getKeyValuePairs()) {
                out.put(kv.key, kv.value);
            }
        }
        return out;
    }
}
