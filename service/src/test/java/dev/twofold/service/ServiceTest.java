package dev.twofold.service;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import dev.twofold.db.access.ApiKeys;
import dev.twofold.db.access.KeyRole;
import dev.twofold.service.access.KeyRing;
import dev.twofold.service.http.ProblemType;
import dev.twofold.service.testing.ApiClient;
import dev.twofold.service.testing.KitchenModel;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.InputStream;
import java.io.OutputStream;
import java.net.ConnectException;
import java.net.InetAddress;
import java.net.ServerSocket;
import java.net.Socket;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.util.List;
import java.util.concurrent.CompletableFuture;
import java.util.concurrent.TimeUnit;
import java.util.function.BooleanSupplier;
import org.junit.jupiter.api.Test;

class ServiceTest {

    /** Generous upper bound for waiting on the server; the tests never assert on elapsed time. */
    private static final Duration WAIT = Duration.ofSeconds(20);
    private static final Duration STOP_TIMEOUT = Duration.ofSeconds(15);

    private static ServiceSettings local() {
        return new ServiceSettings("127.0.0.1", 0, STOP_TIMEOUT, Duration.ofSeconds(2));
    }

    @Test
    void without_a_model_the_service_is_live_but_not_ready_and_v1_reads_say_retry_later() {
        try (Service service = new Service(local())) {
            ApiClient api = new ApiClient(service.start());
            assertEquals(200, api.get("/health/live").statusCode());

            for (HttpResponse<String> response : List.of(
                    api.get("/health/ready"),
                    api.get("/v1/users/cy/recommendations"),
                    api.postJson("/v1/predictions", "{\"pairs\": [{\"user\": \"cy\", \"item\": \"soup\"}]}"))) {
                assertEquals(503, response.statusCode(), response.body());
                assertEquals("application/problem+json", response.headers().firstValue("Content-Type").orElseThrow());
                assertEquals(ProblemType.MODEL_NOT_LOADED.uri(), ApiClient.json(response).path("type").asText());
                assertEquals("2", response.headers().firstValue("Retry-After").orElseThrow());
            }

            service.install(KitchenModel.build());
            HttpResponse<String> ready = api.get("/health/ready");
            assertEquals(200, ready.statusCode());
            assertEquals(KitchenModel.MODEL_ID, ApiClient.json(ready).path("model").asLong());
            assertEquals(200, api.get("/v1/users/cy/recommendations").statusCode());
        }
    }

    @Test
    void the_http_server_runs_on_a_fixed_pool_of_the_configured_size_and_answers_more_connections_than_threads()
            throws Exception {
        ServiceSettings eight = new ServiceSettings("127.0.0.1", 0, STOP_TIMEOUT, Duration.ofSeconds(2),
                ServiceSettings.DEFAULT_FRESH_USERS, true, ServiceSettings.MIN_HTTP_THREADS, Duration.ZERO, 0);
        try (Service service = new Service(eight)) {
            int port = service.start();
            service.install(KitchenModel.build());
            long threads = Thread.getAllStackTraces().keySet().stream()
                    .filter(t -> t.getName().startsWith("twofold-http")).count();
            assertEquals(ServiceSettings.MIN_HTTP_THREADS, threads, "the pool is started whole and never grows");
            // 24 clients at once on 8 threads (some taken by the acceptor and selector): all answered
            ApiClient api = new ApiClient(port);
            java.util.concurrent.ExecutorService clients = java.util.concurrent.Executors.newFixedThreadPool(24);
            try {
                List<CompletableFuture<Integer>> calls = new java.util.ArrayList<>();
                for (int c = 0; c < 24; c++) {
                    calls.add(CompletableFuture.supplyAsync(
                            () -> api.get("/v1/users/cy/recommendations").statusCode(), clients));
                }
                for (CompletableFuture<Integer> call : calls) {
                    assertEquals(200, call.get(WAIT.toSeconds(), TimeUnit.SECONDS));
                }
            } finally {
                clients.shutdownNow();
            }
            assertEquals(threads, Thread.getAllStackTraces().keySet().stream()
                    .filter(t -> t.getName().startsWith("twofold-http")).count());
        }
    }

    @Test
    void the_warm_up_sends_requests_to_a_throwaway_server_that_leaves_nothing_behind() throws Exception {
        // the warm-up answers requests (503s here: no model) ...
        assertTrue(dev.twofold.service.http.HttpWarmUp.run(() -> null, new dev.twofold.service.scoring.Ranker(),
                config -> { }, Duration.ofMillis(500),
                key -> dev.twofold.service.access.KeyRing.only(key, "warm-up", dev.twofold.db.access.KeyRole.READ)) > 0);
        // ... and a service that warms up counts none of them and serves as usual afterwards
        try (Service service = new Service(local().withWarmUp(Duration.ofSeconds(1)))) {
            service.install(KitchenModel.build());
            ApiClient api = new ApiClient(service.start());
            assertEquals(200, api.get("/health/ready").statusCode());
            String metrics = api.get("/metrics").body();
            assertFalse(metrics.contains("/recommendations") || metrics.contains("/similar"),
                    "warm-up requests were counted:\n" + metrics);
            assertFalse(metrics.contains("unauthorized"), "the warm-up's keyless request was counted as a refusal");
            assertTrue(metrics.contains("twofold_list_cache_lookups_total{outcome=\"hit\"} 0.0")
                    && metrics.contains("twofold_list_cache_lookups_total{outcome=\"miss\"} 0.0"),
                    "the warm-up's kept-list lookups were counted:\n" + metrics);
            assertTrue(Thread.getAllStackTraces().keySet().stream()
                    .noneMatch(t -> t.isAlive() && t.getName().startsWith("twofold-warm-up")));
            assertEquals(200, api.get("/v1/users/cy/recommendations").statusCode());
            assertTrue(api.get("/metrics").body().contains("/v1/users/{user}/recommendations"),
                    "a real request is counted");
        }
    }

    @Test
    void installing_a_model_replaces_the_previous_one_for_the_next_request() {
        try (Service service = new Service(local())) {
            ApiClient api = new ApiClient(service.start());
            assertTrue(service.install(KitchenModel.build()).isEmpty());
            var replaced = service.install(new dev.twofold.service.testing.RandomModel(3, 10, 10, 2, 1).model);
            assertEquals(KitchenModel.MODEL_ID, replaced.orElseThrow().id());
            assertEquals(11, ApiClient.json(api.get("/health/ready")).path("model").asLong());
        }
    }

    @Test
    void stopping_lets_a_request_in_flight_finish_and_refuses_new_connections() throws Exception {
        Service service = new Service(local());
        service.install(KitchenModel.build());
        int port = service.start();
        byte[] body = "{\"pairs\": [{\"user\": \"cy\", \"item\": \"soup\"}]}".getBytes(StandardCharsets.UTF_8);
        CompletableFuture<Void> closing;
        try (Socket socket = new Socket(InetAddress.getLoopbackAddress(), port)) {
            socket.setSoTimeout((int) WAIT.toMillis());
            OutputStream out = socket.getOutputStream();
            out.write(("POST /v1/predictions HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: application/json\r\n"
                    + "Content-Length: " + body.length + "\r\n\r\n").getBytes(StandardCharsets.US_ASCII));
            out.write(body, 0, 10);
            out.flush();
            awaitTrue("the request is being handled", () -> service.inFlightRequests() == 1);

            closing = CompletableFuture.runAsync(service::close);
            awaitTrue("new connections are refused", () -> refusesConnections(port));
            assertFalse(closing.isDone(), "close waits for the request in flight");

            out.write(body, 10, body.length - 10);
            out.flush();
            String response = readResponse(socket.getInputStream());
            assertTrue(response.startsWith("HTTP/1.1 200"), response);
            assertTrue(response.contains("\"predictions\""), response);
        }
        closing.get(WAIT.toMillis(), TimeUnit.MILLISECONDS);
        service.close();
    }

    @Test
    void close_is_safe_twice_and_without_start_and_a_closed_service_cannot_start() {
        Service never = new Service(local());
        never.close();
        never.close();
        assertThrows(IllegalStateException.class, never::start);

        Service service = new Service(local());
        int port = service.start();
        assertThrows(IllegalStateException.class, service::start);
        service.close();
        service.close();
        assertTrue(refusesConnections(port));
    }

    @Test
    void a_port_in_use_fails_start_with_a_message_naming_the_setting() throws IOException {
        try (ServerSocket taken = new ServerSocket(0, 1, InetAddress.getLoopbackAddress());
                Service service = new Service(new ServiceSettings("127.0.0.1", taken.getLocalPort(), STOP_TIMEOUT,
                        Duration.ofSeconds(1)))) {
            ServiceStartException e = assertThrows(ServiceStartException.class, service::start);
            assertTrue(e.getMessage().contains(Integer.toString(taken.getLocalPort()))
                    && e.getMessage().contains(ServiceSettings.PORT_VARIABLE), e.getMessage());
        }
    }

    @Test
    void the_key_ring_guards_v1_routes_with_their_role_and_leaves_health_open() {
        KeyRing keys = new KeyRing(1);
        try (Service service = new Service(local(), keys)) {
            service.install(KitchenModel.build());
            ApiClient api = new ApiClient(service.start());
            HttpResponse<String> notYet = api.get("/health/ready");
            assertEquals(503, notYet.statusCode(), "not ready before the keys were read");
            assertEquals(ProblemType.DATABASE_UNAVAILABLE.uri(), ApiClient.json(notYet).path("type").asText());

            keys.replace(List.of(new ApiKeys.LiveKey(1, "kitchen", KeyRole.READ, ApiKeys.hash("kitchen-key"))));
            HttpResponse<String> refused = api.get("/v1/users/cy/recommendations");
            assertEquals(401, refused.statusCode());
            assertTrue(refused.headers().firstValue("WWW-Authenticate").orElseThrow().startsWith("Bearer "));
            JsonNode problem = ApiClient.json(refused);
            assertEquals(ProblemType.UNAUTHORIZED.uri(), problem.path("type").asText());
            assertTrue(problem.path("detail").asText().contains("role read"), problem.toString());

            ApiClient reader = new ApiClient(api.uri("/").getPort(), "kitchen-key");
            assertEquals(200, reader.get("/v1/users/cy/recommendations").statusCode());
            HttpResponse<String> write = reader.postJson("/v1/ratings", "[]");
            assertEquals(403, write.statusCode(), write.body());
            assertEquals(ProblemType.FORBIDDEN.uri(), ApiClient.json(write).path("type").asText());
            assertEquals(200, api.get("/health/ready").statusCode());
            assertEquals(200, api.get("/openapi.yaml").statusCode());
        }
    }

    @Test
    void errors_outside_any_route_are_problems_too() {
        try (Service service = new Service(local())) {
            ApiClient api = new ApiClient(service.start());
            HttpResponse<String> tooLong = api.send(HttpRequest.newBuilder(api.uri("/health/live"))
                    .header("X-Filler", "y".repeat(64 * 1024)).GET());
            assertEquals(431, tooLong.statusCode(), tooLong.body());
            assertEquals("application/problem+json", tooLong.headers().firstValue("Content-Type").orElse(""));
            assertEquals(431, ApiClient.json(tooLong).path("status").asInt());
        }
    }

    private static boolean refusesConnections(int port) {
        try (Socket probe = new Socket()) {
            probe.connect(new java.net.InetSocketAddress(InetAddress.getLoopbackAddress(), port));
            return false;
        } catch (ConnectException e) {
            return true;
        } catch (IOException e) {
            return false;
        }
    }

    private static void awaitTrue(String what, BooleanSupplier condition) throws InterruptedException {
        long deadline = System.nanoTime() + WAIT.toNanos();
        while (!condition.getAsBoolean()) {
            if (System.nanoTime() > deadline) {
                throw new AssertionError("gave up waiting until " + what);
            }
            Thread.sleep(10);
        }
    }

    /** Reads one HTTP/1.1 response with a Content-Length body. */
    private static String readResponse(InputStream in) throws IOException {
        ByteArrayOutputStream seen = new ByteArrayOutputStream();
        int headerEnd = -1;
        int contentLength = -1;
        int b;
        while ((b = in.read()) != -1) {
            seen.write(b);
            String text = seen.toString(StandardCharsets.UTF_8);
            if (headerEnd < 0 && text.endsWith("\r\n\r\n")) {
                headerEnd = text.length();
                for (String line : text.split("\r\n")) {
                    if (line.toLowerCase().startsWith("content-length:")) {
                        contentLength = Integer.parseInt(line.substring(15).trim());
                    }
                }
            }
            if (headerEnd >= 0 && seen.size() >= headerEnd + Math.max(0, contentLength)) {
                break;
            }
        }
        return seen.toString(StandardCharsets.UTF_8);
    }
}
