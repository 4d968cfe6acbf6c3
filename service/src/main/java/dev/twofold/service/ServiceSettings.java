package dev.twofold.service;

import dev.twofold.db.ConfigurationException;
import java.time.Duration;
import java.util.Map;

/**
 * How the service listens and paces itself, read and checked once at start-up.
 *
 * @param host              interface to listen on ({@code TWOFOLD_HTTP_HOST}, default {@value #DEFAULT_HOST}:
 *                          every interface, as a container or a host behind a load balancer needs;
 *                          set {@code 127.0.0.1} to serve this machine only)
 * @param port              TCP port ({@code TWOFOLD_HTTP_PORT}, default {@value #DEFAULT_PORT}; 0 picks a free port)
 * @param stopTimeout       how long a stop waits for requests in flight before closing connections
 * @param modelPollInterval how often the service checks the active model in case a promotion
 *                          notification was missed; also the Retry-After it sends while it has no
 *                          model (rounded up to whole seconds)
 * @param freshUsers        most users kept folded in since the model was loaded
 *                          ({@code TWOFOLD_FRESH_USERS}, default {@value #DEFAULT_FRESH_USERS})
 * @param openAccess        admit {@code /v1} requests without an API key ({@code TWOFOLD_ACCESS=open});
 *                          for local development only, so only with a loopback {@code host}. The
 *                          default ({@code TWOFOLD_ACCESS=keys}) checks every request's key.
 * @param httpThreads       threads of the HTTP server, its selector and acceptor included
 *                          ({@code TWOFOLD_HTTP_THREADS}, default {@link #defaultHttpThreads()}: 8 per
 *                          core, at least 16). Connections beyond what the threads can take wait in
 *                          the server's queue. Ranking is CPU-bound, so more threads than that only
 *                          make requests share the cores in smaller slices: on 2 cores at 32
 *                          connections, 16 threads served about a fifth more requests a second than
 *                          the framework's 250, at a lower tail latency (docs/benchmarks.md)
 * @param listCacheMb       MiB of ranked lists kept per model for users asked for again
 *                          ({@code TWOFOLD_LIST_CACHE_MB}, default {@value #DEFAULT_LIST_CACHE_MB}; 0
 *                          keeps none): about 3,700 users per MiB, each answered again without
 *                          scoring every item until the next model or their next write
 *                          ({@code ListCache})
 * @param warmUp            how long the service sends itself requests on a throwaway loopback server
 *                          before it binds its port ({@code TWOFOLD_WARM_UP_SECONDS}, default
 *                          {@value #DEFAULT_WARM_UP_SECONDS} s; 0 skips it), so the JIT compiles the
 *                          HTTP path while the cores are free (see {@code HttpWarmUp})
 */
public record ServiceSettings(String host, int port, Duration stopTimeout, Duration modelPollInterval,
        int freshUsers, boolean openAccess, int httpThreads, Duration warmUp, int listCacheMb) {

    public static final String HOST_VARIABLE = "TWOFOLD_HTTP_HOST";
    public static final String PORT_VARIABLE = "TWOFOLD_HTTP_PORT";
    public static final String FRESH_USERS_VARIABLE = "TWOFOLD_FRESH_USERS";
    public static final String ACCESS_VARIABLE = "TWOFOLD_ACCESS";
    public static final String THREADS_VARIABLE = "TWOFOLD_HTTP_THREADS";
    /** Fewest HTTP threads: the acceptor and selector take some, and a few must be left to answer. */
    public static final int MIN_HTTP_THREADS = 8;
    public static final int MAX_HTTP_THREADS = 1_000;
    public static final String LIST_CACHE_VARIABLE = "TWOFOLD_LIST_CACHE_MB";
    public static final int DEFAULT_LIST_CACHE_MB = 32;
    public static final int MAX_LIST_CACHE_MB = 65_536;
    public static final String WARM_UP_VARIABLE = "TWOFOLD_WARM_UP_SECONDS";
    public static final int DEFAULT_WARM_UP_SECONDS = 3;
    public static final int MAX_WARM_UP_SECONDS = 120;
    public static final String ACCESS_KEYS = "keys";
    public static final String ACCESS_OPEN = "open";
    public static final String DEFAULT_HOST = "0.0.0.0";
    public static final int DEFAULT_PORT = 8080;
    public static final int MAX_PORT = 65_535;
    public static final long DEFAULT_STOP_TIMEOUT_MS = 10_000;
    /** Polling is the fallback to notifications; every 2 s keeps a missed promotion within the 5 s promise. */
    public static final long DEFAULT_MODEL_POLL_MS = 2_000;
    public static final int DEFAULT_FRESH_USERS = 100_000;
    public static final int MAX_FRESH_USERS = 10_000_000;

    public ServiceSettings {
        if (host == null || host.isBlank() || host.chars().anyMatch(Character::isWhitespace)) {
            throw new ConfigurationException(HOST_VARIABLE + "='" + host + "' is not a host name or address; use e.g. "
                    + DEFAULT_HOST + " (every interface) or 127.0.0.1 (this machine only)");
        }
        if (port < 0 || port > MAX_PORT) {
            throw new ConfigurationException(PORT_VARIABLE + "=" + port + " is outside 0.." + MAX_PORT
                    + " (0 picks a free port)");
        }
        if (stopTimeout == null || stopTimeout.isNegative()) {
            throw new ConfigurationException("stop timeout " + stopTimeout + " must be zero or positive");
        }
        if (modelPollInterval == null || modelPollInterval.isNegative() || modelPollInterval.isZero()) {
            throw new ConfigurationException("model poll interval " + modelPollInterval + " must be positive");
        }
        if (freshUsers < 0 || freshUsers > MAX_FRESH_USERS) {
            throw new ConfigurationException(FRESH_USERS_VARIABLE + "=" + freshUsers + " is outside 0.."
                    + MAX_FRESH_USERS);
        }
        if (httpThreads < MIN_HTTP_THREADS || httpThreads > MAX_HTTP_THREADS) {
            throw new ConfigurationException(THREADS_VARIABLE + "=" + httpThreads + " is outside " + MIN_HTTP_THREADS
                    + ".." + MAX_HTTP_THREADS);
        }
        if (warmUp == null || warmUp.isNegative() || warmUp.compareTo(Duration.ofSeconds(MAX_WARM_UP_SECONDS)) > 0) {
            throw new ConfigurationException(WARM_UP_VARIABLE + "=" + (warmUp == null ? null : warmUp.toSeconds())
                    + " is outside 0.." + MAX_WARM_UP_SECONDS + " seconds");
        }
        if (listCacheMb < 0 || listCacheMb > MAX_LIST_CACHE_MB) {
            throw new ConfigurationException(LIST_CACHE_VARIABLE + "=" + listCacheMb + " is outside 0.."
                    + MAX_LIST_CACHE_MB + " (MiB; 0 keeps no ranked lists)");
        }
        if (openAccess && !loopback(host)) {
            throw new ConfigurationException(ACCESS_VARIABLE + "=" + ACCESS_OPEN + " admits every request without an API"
                    + " key and is for local development only, so it needs " + HOST_VARIABLE + "=127.0.0.1 (or ::1,"
                    + " localhost); " + HOST_VARIABLE + " is '" + host + "'. Unset " + ACCESS_VARIABLE
                    + " to check API keys");
        }
    }

    /** These settings with a warm-up of {@code warmUp} before the port is bound. */
    public ServiceSettings withWarmUp(Duration warmUp) {
        return new ServiceSettings(host, port, stopTimeout, modelPollInterval, freshUsers, openAccess, httpThreads,
                warmUp, listCacheMb);
    }

    /** These settings with {@code megabytes} MiB of ranked lists kept per model. */
    public ServiceSettings withListCache(int megabytes) {
        return new ServiceSettings(host, port, stopTimeout, modelPollInterval, freshUsers, openAccess, httpThreads,
                warmUp, megabytes);
    }

    /** {@link #listCacheMb()} in bytes. */
    public long listCacheBytes() {
        return (long) listCacheMb << 20;
    }

    /** Settings that check API keys, with the default number of fresh users and no warm-up. */
    public ServiceSettings(String host, int port, Duration stopTimeout, Duration modelPollInterval) {
        this(host, port, stopTimeout, modelPollInterval, DEFAULT_FRESH_USERS);
    }

    /** Settings that check API keys, without a warm-up. */
    public ServiceSettings(String host, int port, Duration stopTimeout, Duration modelPollInterval, int freshUsers) {
        this(host, port, stopTimeout, modelPollInterval, freshUsers, false, defaultHttpThreads(), Duration.ZERO,
                DEFAULT_LIST_CACHE_MB);
    }

    /** HTTP threads when {@code TWOFOLD_HTTP_THREADS} is not set: 8 per available core, at least 16. */
    public static int defaultHttpThreads() {
        return Math.min(MAX_HTTP_THREADS, Math.max(16, 8 * Runtime.getRuntime().availableProcessors()));
    }

    /**
     * Defaults overridden by {@code TWOFOLD_HTTP_HOST}, {@code TWOFOLD_HTTP_PORT},
     * {@code TWOFOLD_FRESH_USERS}, {@code TWOFOLD_ACCESS}, {@code TWOFOLD_HTTP_THREADS},
     * {@code TWOFOLD_WARM_UP_SECONDS} and {@code TWOFOLD_LIST_CACHE_MB} when set and not blank.
     */
    public static ServiceSettings fromEnvironment(Map<String, String> env) {
        String host = env.get(HOST_VARIABLE);
        String port = env.get(PORT_VARIABLE);
        String fresh = env.get(FRESH_USERS_VARIABLE);
        String access = env.get(ACCESS_VARIABLE);
        String threads = env.get(THREADS_VARIABLE);
        String warmUp = env.get(WARM_UP_VARIABLE);
        String lists = env.get(LIST_CACHE_VARIABLE);
        boolean open = false;
        if (access != null && !access.isBlank()) {
            String mode = access.trim();
            if (mode.equals(ACCESS_OPEN)) {
                open = true;
            } else if (!mode.equals(ACCESS_KEYS)) {
                throw new ConfigurationException(ACCESS_VARIABLE + "='" + mode + "' is not " + ACCESS_KEYS
                        + " (the default: every /v1 request needs an API key) or " + ACCESS_OPEN
                        + " (no keys; local development on a loopback address only)");
            }
        }
        return new ServiceSettings(
                host == null || host.isBlank() ? DEFAULT_HOST : host.trim(),
                port == null || port.isBlank() ? DEFAULT_PORT : parse(PORT_VARIABLE, port.trim(), "0.." + MAX_PORT
                        + " (0 picks a free port)"),
                Duration.ofMillis(DEFAULT_STOP_TIMEOUT_MS),
                Duration.ofMillis(DEFAULT_MODEL_POLL_MS),
                fresh == null || fresh.isBlank() ? DEFAULT_FRESH_USERS : parse(FRESH_USERS_VARIABLE, fresh.trim(),
                        "0.." + MAX_FRESH_USERS),
                open,
                threads == null || threads.isBlank() ? defaultHttpThreads() : parse(THREADS_VARIABLE, threads.trim(),
                        MIN_HTTP_THREADS + ".." + MAX_HTTP_THREADS),
                Duration.ofSeconds(warmUp == null || warmUp.isBlank() ? DEFAULT_WARM_UP_SECONDS
                        : parse(WARM_UP_VARIABLE, warmUp.trim(), "0.." + MAX_WARM_UP_SECONDS + " seconds")),
                lists == null || lists.isBlank() ? DEFAULT_LIST_CACHE_MB : parse(LIST_CACHE_VARIABLE, lists.trim(),
                        "0.." + MAX_LIST_CACHE_MB + " (MiB)"));
    }

    /** Whether {@code host} names this machine only: 127.0.0.0/8, ::1 or localhost (no name lookup). */
    static boolean loopback(String host) {
        String h = host.startsWith("[") && host.endsWith("]") ? host.substring(1, host.length() - 1) : host;
        return h.equals("localhost") || h.equals("::1") || h.equals("0:0:0:0:0:0:0:1")
                || h.matches("127(\\.\\d{1,3}){3}");
    }

    /** Whole seconds a client should wait before asking again for a model, at least 1. */
    public int retryAfterSeconds() {
        return (int) Math.max(1, (modelPollInterval.toMillis() + 999) / 1000);
    }

    private static int parse(String variable, String value, String range) {
        try {
            return Integer.parseInt(value);
        } catch (NumberFormatException e) {
            throw new ConfigurationException(variable + "='" + value + "' is not a whole number; use " + range);
        }
    }
}
