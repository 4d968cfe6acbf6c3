package dev.twofold.service.http;

import dev.twofold.service.fresh.LiveModel;
import dev.twofold.service.model.ServingModel;
import dev.twofold.service.scoring.ListCache;
import dev.twofold.service.scoring.Ranker;
import io.javalin.config.JavalinConfig;
import java.io.IOException;
import java.net.URI;
import java.net.URLEncoder;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.security.SecureRandom;
import java.time.Duration;
import java.util.ArrayList;
import java.util.HexFormat;
import java.util.List;
import java.util.concurrent.Callable;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicLong;
import java.util.function.Consumer;
import java.util.function.Function;
import java.util.function.Supplier;

/**
 * Requests the service sends itself before it binds its port, so the JIT compiles the HTTP path
 * (server, framework, routing, access check, handlers, JSON and problem writing) while the cores
 * are free. Without it that code is compiled under the first real load, where the compiler thread
 * gets a small share of the cores: measured on 2 cores at 32 connections, a cold service took
 * 60-100 s to reach its steady rate (docs/benchmarks.md). The scoring kernel is warmed separately,
 * on the first model installed.
 *
 * <p>The requests go to a throwaway server of the same routes on an ephemeral 127.0.0.1 port,
 * stopped before the real one binds: nothing reaches the real metrics or request log, no write
 * route can store anything (the throwaway server has no database), and its {@code /v1} routes
 * admit only a random one-off key held in memory for the warm-up, checked like real keys. Only
 * reads are sent: {@code /health/live}, {@code /health/ready}, recommendations for users of the
 * model (most of the requests: the paths real traffic takes, from a kept list and scored) and for
 * made-up users (popularity, or 503 without a model), similar items of the model's items, and a
 * request without a key (401).
 */
public final class HttpWarmUp {

    /** Concurrent clients: enough that the server's requests batch as under real load. */
    static final int CLIENTS = 8;
    private static final Duration REQUEST_TIMEOUT = Duration.ofSeconds(5);
    /** Users with factors asked for recommendations in turn. */
    static final int KNOWN_USERS = 64;
    /** The count of every eighth of those requests: a body over what a scoring thread writes itself. */
    static final int LONG_LIST = 200;
    /** The count of the other odd ones: more than a kept list holds, so it is scored every time. */
    static final int SCORED_LIST = ListCache.DEPTH + 1;

    private HttpWarmUp() {
    }

    /**
     * Starts a throwaway server with the routes of {@code live} and {@code ranker} on 127.0.0.1,
     * sends it requests for {@code budget} from {@value #CLIENTS} threads and stops it. Returns the
     * number of requests answered (any status).
     *
     * @param server  configures the throwaway server's threads like the real one's
     * @param onlyKey the access policy that admits only the given one-off key, checked the way the
     *                real server checks keys (the service passes a one-key {@code KeyRing}), so the
     *                key check is compiled too
     */
    public static long run(Supplier<LiveModel> live, Ranker ranker,
            Consumer<JavalinConfig> server, Duration budget, Function<String, AccessPolicy> onlyKey)
            throws InterruptedException {
        if (budget.isZero() || budget.isNegative()) {
            return 0;
        }
        byte[] secret = new byte[32];
        new SecureRandom().nextBytes(secret);
        String key = HexFormat.of().formatHex(secret);
        AccessPolicy oneKey = onlyKey.apply(key);
        HttpApi api = new HttpApi(live, ranker, null, null, oneKey, null, ServingObserver.NONE, server,
                Duration.ZERO, 1);
        int port = api.start("127.0.0.1", 0);
        try {
            return send(port, key, requests(live.get()), budget);
        } finally {
            api.stop();
        }
    }

    /** What the clients send in turn: reads only. */
    private static List<String> requests(LiveModel now) {
        List<String> paths = new ArrayList<>(List.of(
                "/health/live",
                "/health/ready",
                "/v1/users/warm-up-cook/recommendations?count=10",
                "/v1/users/warm-up-cook/recommendations?count=20&exclude=warm-up-recipe"));
        if (now != null && now.model().numItems() > 0) {
            paths.addAll(knownUsers(now.model()));
            int items = now.model().numItems();
            for (int j = 0; j < 4; j++) {
                String item = now.model().itemId((int) ((long) j * items / 4));
                paths.add("/v1/items/" + URLEncoder.encode(item, StandardCharsets.UTF_8)
                        .replace("+", "%20") + "/similar?count=10");
            }
        }
        return paths;
    }

    /**
     * Recommendations for up to {@value #KNOWN_USERS} users with factors, spread over the user
     * index: the paths real traffic takes most. Half ask for 10 items: scored once, then answered
     * from the kept list ({@code ListCache}) on the HTTP thread. Most of the others ask for one
     * item more than a kept list holds, so they are scored in batches every time and answered
     * from a scoring thread; every eighth asks for a list long enough that its body is written from
     * an HTTP thread instead.
     */
    static List<String> knownUsers(ServingModel model) {
        List<String> paths = new ArrayList<>();
        int users = model.trainedUsers();
        for (int j = 0; j < KNOWN_USERS && users > 0; j++) {
            int user = (int) ((long) j * users / KNOWN_USERS);
            String id = model.userId(user);
            if (model.hasFactors(user) && id != null) {
                paths.add("/v1/users/" + URLEncoder.encode(id, StandardCharsets.UTF_8).replace("+", "%20")
                        + "/recommendations?count=" + (j % 8 == 7 ? LONG_LIST : j % 2 == 1 ? SCORED_LIST : 10));
            }
        }
        return paths;
    }

    private static long send(int port, String key, List<String> paths, Duration budget) throws InterruptedException {
        HttpClient client = HttpClient.newBuilder().version(HttpClient.Version.HTTP_1_1)
                .connectTimeout(REQUEST_TIMEOUT).build();
        List<HttpRequest> requests = new ArrayList<>();
        for (String path : paths) {
            requests.add(HttpRequest.newBuilder(URI.create("http://127.0.0.1:" + port + path)).timeout(REQUEST_TIMEOUT)
                    .header("Authorization", "Bearer " + key).GET().build());
        }
        // and one without the key: the refusal path
        requests.add(HttpRequest.newBuilder(URI.create("http://127.0.0.1:" + port + paths.get(2)))
                .timeout(REQUEST_TIMEOUT).GET().build());
        long deadline = System.nanoTime() + budget.toNanos();
        AtomicLong answered = new AtomicLong();
        List<Callable<Void>> loops = new ArrayList<>();
        for (int c = 0; c < CLIENTS; c++) {
            int first = c;
            loops.add(() -> {
                for (int n = first; System.nanoTime() < deadline; n++) {
                    try {
                        client.send(requests.get(n % requests.size()), HttpResponse.BodyHandlers.discarding());
                        answered.incrementAndGet();
                    } catch (IOException e) {
                        return null; // only an optimisation: a client that cannot connect stops
                    }
                }
                return null;
            });
        }
        ExecutorService clients = Executors.newFixedThreadPool(CLIENTS, r -> {
            Thread t = new Thread(r, "twofold-warm-up");
            t.setDaemon(true);
            return t;
        });
        try {
            // every request has its own timeout, so this returns soon after the deadline
            clients.invokeAll(loops, budget.toMillis() + 2 * REQUEST_TIMEOUT.toMillis(), TimeUnit.MILLISECONDS);
        } finally {
            clients.shutdownNow();
            clients.awaitTermination(REQUEST_TIMEOUT.toMillis(), TimeUnit.MILLISECONDS);
        }
        return answered.get();
    }
}
