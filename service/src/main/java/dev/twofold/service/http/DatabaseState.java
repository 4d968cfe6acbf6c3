package dev.twofold.service.http;

/**
 * What the API knows of its database between requests: whether it answered lately. Routes that
 * must write or read the database (ratings, trust, erasure, the model admin routes) ask
 * {@link #reachable()} first and answer 503 at once while it is not, instead of waiting for a
 * connection that will not come; a request that finds the database gone reports it through
 * {@link #lost(String)}, and whoever implements this finds out when it is back. Recommendations,
 * predictions and similar items never touch the database and never ask.
 */
public interface DatabaseState {

    /** Whether the database answered last time anyone looked. */
    boolean reachable();

    /** Since when the database is unreachable, as text for a person ("since 12:03:07Z"), or empty while it is reachable. */
    String unreachableSince();

    /** A request could not reach the database, for {@code reason}. */
    void lost(String reason);
}
