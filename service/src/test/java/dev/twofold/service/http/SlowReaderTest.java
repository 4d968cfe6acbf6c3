package dev.twofold.service.http;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTimeoutPreemptively;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import dev.twofold.service.Service;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.bench.SyntheticModel;
import dev.twofold.service.model.ServingModel;
import dev.twofold.service.scoring.Ranker;
import dev.twofold.service.testing.ApiClient;
import java.io.IOException;
import java.net.InetSocketAddress;
import java.net.StandardSocketOptions;
import java.net.http.HttpResponse;
import java.nio.ByteBuffer;
import java.nio.channels.SocketChannel;
import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.List;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;
import org.junit.jupiter.params.provider.ValueSource;

/**
 * Recommendations and similar items are answered from the scoring threads when the body is small
 * and from an HTTP thread when it is large; either way the answer is the ranker's, and a client that sends request
 * after request without reading the answers holds up nobody else.
 */
class SlowReaderTest {

    private static ServingModel model;
    private static Service service;
    private static int port;
    private static ApiClient api;

    @BeforeAll
    static void start() {
        model = SyntheticModel.build(300, 3_000, 8, 20, 11, true, false);
        service = new Service(new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(5), Duration.ofSeconds(1)));
        service.install(model);
        port = service.start();
        api = new ApiClient(port);
    }

    @AfterAll
    static void stop() {
        service.close();
    }

    @ParameterizedTest
    @ValueSource(ints = {10, 1000})
    void small_and_large_lists_match_the_blocking_ranker(int count) {
        HttpResponse<String> response = api.get("/v1/users/cook-5/recommendations?count=" + count);
        assertEquals(200, response.statusCode(), response.body());
        assertEquals(count > 10, response.body().length() > HttpApi.INLINE_BODY_BYTES,
                "count " + count + " makes a body of " + response.body().length() + " bytes");
        JsonNode items = ApiClient.json(response).path("items");
        int[] want = new Ranker().recommend(model, "cook-5", count, List.of()).items();
        assertEquals(want.length, items.size());
        for (int j = 0; j < want.length; j++) {
            assertEquals(model.itemId(want[j]), items.get(j).path("item").asText(), "rank " + j);
        }
    }

    @ParameterizedTest
    @ValueSource(ints = {10, 1000})
    void small_and_large_similar_lists_match_the_engine(int count) {
        int item = 17;
        HttpResponse<String> response = api.get("/v1/items/" + model.itemId(item) + "/similar?count=" + count);
        assertEquals(200, response.statusCode(), response.body());
        assertEquals(count > 10, response.body().length() > HttpApi.INLINE_BODY_BYTES,
                "count " + count + " makes a body of " + response.body().length() + " bytes");
        JsonNode items = ApiClient.json(response).path("items");
        int[] want = new Ranker().engine().similar(model, item, count, new int[0], 0, 0).items();
        assertEquals(want.length, items.size());
        for (int j = 0; j < want.length; j++) {
            assertEquals(model.itemId(want[j]), items.get(j).path("item").asText(), "rank " + j);
        }
    }

    @Test
    void the_warm_up_asks_for_users_of_the_model_in_small_and_large_answers() {
        List<String> paths = HttpWarmUp.knownUsers(model);
        assertEquals(HttpWarmUp.KNOWN_USERS, paths.size(), "the model has " + model.trainedUsers() + " users");
        assertEquals(paths.size(), new HashSet<>(paths).size(), "distinct users: " + paths);
        int large = 0;
        for (String path : paths) {
            String user = path.substring("/v1/users/".length(), path.indexOf("/recommendations"));
            assertTrue(model.hasFactors(model.userIndex(user)), path);
            HttpResponse<String> response = api.get(path);
            assertEquals(200, response.statusCode(), path + ": " + response.body());
            assertEquals("model", ApiClient.json(response).path("strategy").asText(), path);
            if (response.body().length() > HttpApi.INLINE_BODY_BYTES) {
                large++;
                assertTrue(path.endsWith("count=" + HttpWarmUp.LONG_LIST), path);
            }
        }
        assertEquals(HttpWarmUp.KNOWN_USERS / 8, large, "answers written from an HTTP thread");
    }

    @ParameterizedTest
    // count 10 is answered from kept lists once each user was scored; 33 (one more than a kept list
    // holds) is scored every time and written from the scoring thread; 1000 from an HTTP thread
    @CsvSource({"recommendations, 10", "recommendations, 33", "recommendations, 1000", "similar, 10",
        "similar, 1000"})
    void clients_that_never_read_their_answers_hold_up_nobody_else(String kind, int count) throws Exception {
        List<SocketChannel> stalled = new ArrayList<>();
        try {
            for (int c = 0; c < 4; c++) {
                stalled.add(stallOne(kind, count));
            }
            assertTimeoutPreemptively(Duration.ofSeconds(20), () -> {
                for (int u = 0; u < 20; u++) {
                    HttpResponse<String> response = api.get("/v1/users/cook-" + u + "/recommendations?count=10");
                    assertEquals(200, response.statusCode(), response.body());
                }
            }, "other clients must be answered while " + stalled.size() + " clients leave answers unread");
        } finally {
            for (SocketChannel channel : stalled) {
                channel.close();
            }
        }
    }

    /**
     * A connection with a small receive window that sends requests of {@code kind}
     * (recommendations or similar items) back to back and never reads, until the server has stopped reading them for half a second: its answers
     * fill the socket buffers and the server is stuck on this connection (or 15 s went by).
     */
    private static SocketChannel stallOne(String kind, int count) throws IOException, InterruptedException {
        SocketChannel channel = SocketChannel.open();
        channel.setOption(StandardSocketOptions.SO_RCVBUF, 4096);
        channel.connect(new InetSocketAddress("127.0.0.1", port));
        channel.configureBlocking(false);
        long deadline = System.nanoTime() + Duration.ofSeconds(15).toNanos();
        long stuckSince = 0;
        ByteBuffer request = ByteBuffer.allocate(0);
        for (int r = 0; System.nanoTime() < deadline; ) {
            if (!request.hasRemaining()) {
                String path = kind.equals("similar")
                        ? "/v1/items/" + model.itemId(r++ % model.numItems()) + "/similar?count=" + count
                        : "/v1/users/cook-" + (r++ % 300) + "/recommendations?count=" + count;
                request = ByteBuffer.wrap(("GET " + path + " HTTP/1.1\r\nHost: 127.0.0.1\r\n\r\n")
                        .getBytes(StandardCharsets.US_ASCII));
            }
            if (channel.write(request) > 0) {
                stuckSince = 0;
            } else if (stuckSince == 0) {
                stuckSince = System.nanoTime();
            } else if (System.nanoTime() - stuckSince > Duration.ofMillis(500).toNanos()) {
                break;
            } else {
                Thread.sleep(10);
            }
        }
        return channel;
    }
}
