package dev.twofold.service.http;

import io.javalin.http.Context;

/**
 * Decides whether a request may use a route that needs a {@link Role}. Every {@code /v1} route
 * declares its role; before the route runs, the API asks the policy, which either returns or
 * throws a {@link ProblemException} ({@link ProblemType#UNAUTHORIZED} with a
 * {@code WWW-Authenticate} header, or {@link ProblemType#FORBIDDEN}). Routes without a role
 * (health, metrics, the dashboard, the OpenAPI document) never reach the policy.
 *
 * <p>{@code twofold serve} checks API keys ({@code dev.twofold.service.access.KeyRing}); {@link #OPEN}
 * is for tests and for local development when asked for explicitly.
 */
@FunctionalInterface
public interface AccessPolicy {

    /** Request attribute where a policy leaves the name of the caller it admitted, for audit lines. */
    String CALLER_ATTRIBUTE = "twofold.caller";

    /** Admits every request. */
    AccessPolicy OPEN = (ctx, needed) -> { };

    /**
     * Returns when the request may use a route needing {@code needed}.
     *
     * @throws ProblemException when it may not
     */
    void admit(Context ctx, Role needed);

    /**
     * Whether the policy can decide yet (a key check needs the keys read from the database once);
     * {@code /health/ready} answers 503 until it can.
     */
    default boolean ready() {
        return true;
    }
}
