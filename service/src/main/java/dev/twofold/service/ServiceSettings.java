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
 * @param modelPollInterval how often the service looks for a first model while it has none; also the
 *                          Retry-After it sends meanwhile (rounded up to whole seconds)
 */
public record ServiceSettings(String host, int port, Duration stopTimeout, Duration modelPollInterval) {

    public static final String HOST_VARIABLE = "TWOFOLD_HTTP_HOST";
    public static final String PORT_VARIABLE = "TWOFOLD_HTTP_PORT";
    public static final String DEFAULT_HOST = "0.0.0.0";
    public static final int DEFAULT_PORT = 8080;
    public static final int MAX_PORT = 65_535;
    public static final long DEFAULT_STOP_TIMEOUT_MS = 10_000;
    public static final long DEFAULT_MODEL_POLL_MS = 5_000;

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
    }

    /** Defaults overridden by {@code TWOFOLD_HTTP_HOST} and {@code TWOFOLD_HTTP_PORT} when set and not blank. */
    public static ServiceSettings fromEnvironment(Map<String, String> env) {
        String host = env.get(HOST_VARIABLE);
        String port = env.get(PORT_VARIABLE);
        return new ServiceSettings(
                host == null || host.isBlank() ? DEFAULT_HOST : host.trim(),
                port == null || port.isBlank() ? DEFAULT_PORT : parsePort(port.trim()),
                Duration.ofMillis(DEFAULT_STOP_TIMEOUT_MS),
                Duration.ofMillis(DEFAULT_MODEL_POLL_MS));
    }

    /** Whole seconds a client should wait before asking again for a model, at least 1. */
    public int retryAfterSeconds() {
        return (int) Math.max(1, (modelPollInterval.toMillis() + 999) / 1000);
    }

    private static int parsePort(String value) {
        try {
            return Integer.parseInt(value);
        } catch (NumberFormatException e) {
            throw new ConfigurationException(PORT_VARIABLE + "='" + value + "' is not a port number; use 0.." + MAX_PORT
                    + " (0 picks a free port)");
        }
    }
}
