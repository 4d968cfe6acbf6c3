package dev.twofold.db.access;

import dev.twofold.db.BadInputException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.internal.SqlFailures;
import java.nio.charset.StandardCharsets;
import java.security.MessageDigest;
import java.security.NoSuchAlgorithmException;
import java.security.SecureRandom;
import java.sql.Connection;
import java.sql.PreparedStatement;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Timestamp;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Base64;
import java.util.List;
import java.util.Map;

/**
 * The API keys in PostgreSQL. A key is {@value #PREFIX} followed by 43 base64url characters (256
 * random bits from {@link SecureRandom}); it is shown once, when created, and only its SHA-256
 * hash is stored. Creating and revoking a key send {@code NOTIFY} on {@value #NOTIFY_CHANNEL} (in the
 * same transaction) so running services take up a new key and drop a revoked one at once.
 */
public final class ApiKeys {

    public static final String PREFIX = "tf_";
    public static final String NOTIFY_CHANNEL = "twofold_keys";
    public static final int KEY_BYTES = 32;
    public static final int SHOWN_CHARS = PREFIX.length() + 6;
    public static final int MAX_NAME_LENGTH = 64;

    private static final SecureRandom RANDOM = new SecureRandom();

    private final Database database;

    public ApiKeys(Database database) {
        this.database = database;
    }

    /** A new key and what is stored of it; {@link #key()} is the only copy of the key there will ever be. */
    public record Created(String key, ApiKey stored) {
        @Override
        public String toString() {
            return "Created[key=****, stored=" + stored + "]";
        }
    }

    /** A live key as a service needs it to check requests. */
    public record LiveKey(long id, String name, KeyRole role, byte[] hash) {
    }

    /**
     * Creates a key with a name no live key has.
     *
     * @throws BadInputException when the name is empty, too long, has control characters, or is taken
     */
    public Created create(String name, KeyRole role) {
        checkName(name);
        String key = generate();
        String sql = "with k as (insert into api_keys (name, role, key_hash, shown) values (?, ?, ?, ?)"
                + " on conflict do nothing returning id, created_at)"
                + " select id, created_at, pg_notify('" + NOTIFY_CHANNEL + "', 'created') from k";
        try (Connection c = database.dataSource().getConnection(); PreparedStatement ps = c.prepareStatement(sql)) {
            ps.setString(1, name);
            ps.setString(2, role.label());
            ps.setBytes(3, hash(key));
            ps.setString(4, key.substring(0, SHOWN_CHARS));
            try (ResultSet rs = ps.executeQuery()) {
                if (!rs.next()) {
                    throw new BadInputException("a live key is already named '" + name
                            + "'; revoke it first or choose another name");
                }
                return new Created(key, new ApiKey(rs.getLong(1), name, role, key.substring(0, SHOWN_CHARS),
                        rs.getTimestamp(2).toInstant(), null, null));
            }
        } catch (SQLException e) {
            throw SqlFailures.translate(e, "creating an API key", database.description());
        }
    }

    /** Every key, live and revoked, oldest first. */
    public List<ApiKey> list() {
        String sql = "select id, name, role, shown, created_at, last_used_at, revoked_at from api_keys order by id";
        List<ApiKey> keys = new ArrayList<>();
        try (Connection c = database.dataSource().getConnection(); PreparedStatement ps = c.prepareStatement(sql);
                ResultSet rs = ps.executeQuery()) {
            while (rs.next()) {
                keys.add(new ApiKey(rs.getLong(1), rs.getString(2), KeyRole.parse(rs.getString(3)), rs.getString(4),
                        instant(rs.getTimestamp(5)), instant(rs.getTimestamp(6)), instant(rs.getTimestamp(7))));
            }
            return keys;
        } catch (SQLException e) {
            throw SqlFailures.translate(e, "listing API keys", database.description());
        }
    }

    /** The live keys with their hashes, for a service's in-memory check. */
    public List<LiveKey> live() {
        String sql = "select id, name, role, key_hash from api_keys where revoked_at is null order by id";
        List<LiveKey> keys = new ArrayList<>();
        try (Connection c = database.dataSource().getConnection(); PreparedStatement ps = c.prepareStatement(sql);
                ResultSet rs = ps.executeQuery()) {
            while (rs.next()) {
                keys.add(new LiveKey(rs.getLong(1), rs.getString(2), KeyRole.parse(rs.getString(3)), rs.getBytes(4)));
            }
            return keys;
        } catch (SQLException e) {
            throw SqlFailures.translate(e, "reading the live API keys", database.description());
        }
    }

    /**
     * Revokes the live key with this name and tells running services, in one transaction.
     *
     * @return false when no live key has that name
     */
    public boolean revoke(String name) {
        try (Connection c = database.dataSource().getConnection()) {
            c.setAutoCommit(false);
            try {
                int changed;
                try (PreparedStatement ps = c.prepareStatement(
                        "update api_keys set revoked_at = now() where name = ? and revoked_at is null")) {
                    ps.setString(1, name);
                    changed = ps.executeUpdate();
                }
                if (changed > 0) {
                    try (PreparedStatement ps = c.prepareStatement("select pg_notify(?, ?)")) {
                        ps.setString(1, NOTIFY_CHANNEL);
                        ps.setString(2, "revoked");
                        ps.execute();
                    }
                }
                c.commit();
                return changed > 0;
            } catch (SQLException | RuntimeException e) {
                c.rollback();
                throw e;
            }
        } catch (SQLException e) {
            throw SqlFailures.translate(e, "revoking an API key", database.description());
        }
    }

    /** Records when keys were last accepted (one statement for a batch of keys). */
    public void recordUse(Map<Long, Instant> lastUsed) {
        if (lastUsed.isEmpty()) {
            return;
        }
        String sql = "update api_keys set last_used_at = greatest(coalesce(last_used_at, u.at), u.at)"
                + " from unnest(?::bigint[], ?::timestamptz[]) as u(id, at) where api_keys.id = u.id";
        try (Connection c = database.dataSource().getConnection(); PreparedStatement ps = c.prepareStatement(sql)) {
            Long[] ids = new Long[lastUsed.size()];
            Timestamp[] at = new Timestamp[lastUsed.size()];
            int i = 0;
            for (Map.Entry<Long, Instant> e : lastUsed.entrySet()) {
                ids[i] = e.getKey();
                at[i++] = Timestamp.from(e.getValue());
            }
            ps.setArray(1, c.createArrayOf("bigint", ids));
            ps.setArray(2, c.createArrayOf("timestamptz", at));
            ps.executeUpdate();
        } catch (SQLException e) {
            throw SqlFailures.translate(e, "recording API key use", database.description());
        }
    }

    /** SHA-256 of the key's UTF-8 bytes. */
    public static byte[] hash(String key) {
        try {
            return MessageDigest.getInstance("SHA-256").digest(key.getBytes(StandardCharsets.UTF_8));
        } catch (NoSuchAlgorithmException e) {
            throw new IllegalStateException("SHA-256 is missing from this JVM", e);
        }
    }

    static String generate() {
        byte[] bytes = new byte[KEY_BYTES];
        RANDOM.nextBytes(bytes);
        return PREFIX + Base64.getUrlEncoder().withoutPadding().encodeToString(bytes);
    }

    private static void checkName(String name) {
        if (name == null || name.isEmpty() || name.length() > MAX_NAME_LENGTH) {
            throw new BadInputException("a key name has 1.." + MAX_NAME_LENGTH + " characters; got "
                    + (name == null ? "none" : name.length()));
        }
        for (int i = 0; i < name.length(); i++) {
            if (Character.isISOControl(name.charAt(i))) {
                throw new BadInputException("key name has a control character at position " + (i + 1));
            }
        }
    }

    private static Instant instant(Timestamp t) {
        return t == null ? null : t.toInstant();
    }
}
