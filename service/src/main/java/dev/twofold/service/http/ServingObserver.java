package dev.twofold.service.http;

import dev.twofold.service.scoring.Strategy;

/**
 * Where the API reports what it did, for metrics: every finished request (route, status,
 * duration) and how each recommendation list was made. Called on request threads; implementations
 * must be fast and thread-safe. {@link #NONE} ignores everything.
 */
public interface ServingObserver {

    ServingObserver NONE = new ServingObserver() {
    };

    /**
     * A request finished.
     *
     * @param method HTTP method
     * @param route  the route template that matched (like {@code /v1/users/{user}/recommendations}),
     *               or the path when none did
     * @param status the response status
     * @param millis time spent in the server
     */
    default void requestFinished(String method, String route, int status, float millis) {
    }

    /** A recommendation list was made for a user with this strategy; {@code folded} when from a fold-in since the load. */
    default void recommended(Strategy strategy, boolean folded) {
    }
}
