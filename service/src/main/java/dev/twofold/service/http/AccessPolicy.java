package dev.twofold.service.http;

import io.javalin.http.Context;

/**
 * Decides whether a request may use a route that needs a {@link Role}. Every {@code /v1} route
 * declares its role; before the route runs, the API asks the policy, which either returns or
 * throws a {@link ProblemException} ({@link ProblemType#UNAUTHORIZED} with a
 * {@code WWW-Authenticate} header, or {@link ProblemType#FORBIDDEN}). Routes without a role
 * (health, the OpenAPI document) never reach the policy.
 *
 * <p>This is the seam for API keys: a policy that reads {@code Authorization: Bearer <key>},
 * looks up the key's hash and compares its role. Until keys exist the service runs with
 * {@link #OPEN}.
 */
@FunctionalInterface
public interface AccessPolicy {

    /** Admits every request. */
    AccessPolicy OPEN = (ctx, needed) -> { };

    /**
     * Returns when the request may use a route needing {@code needed}.
     *
     * @throws ProblemException when it may not
     */
    void admit(Context ctx, Role needed);
}
