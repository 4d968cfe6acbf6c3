package dev.twofold.db.access;

import java.time.Instant;

/**
 * An API key as stored: never the key itself, only what identifies it to a person.
 *
 * @param shown      the first characters of the key, for telling keys apart
 * @param lastUsedAt when a service last accepted it (recorded in batches, so up to a minute late), or null
 * @param revokedAt  when it was revoked, or null while it is live
 */
public record ApiKey(long id, String name, KeyRole role, String shown, Instant createdAt, Instant lastUsedAt,
        Instant revokedAt) {

    public boolean live() {
        return revokedAt == null;
    }
}
