package dev.twofold.service.access;

import dev.twofold.db.access.ApiKeys;
import dev.twofold.db.access.KeyRole;
import dev.twofold.service.http.AccessPolicy;
import dev.twofold.service.http.ProblemException;
import dev.twofold.service.http.ProblemType;
import dev.twofold.service.http.Role;
import io.javalin.http.Context;
import java.security.MessageDigest;
import java.time.Instant;
import java.util.HashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.function.Consumer;

/**
 * The API keys a service accepts, held in memory, and the check of every {@code /v1} request
 * against them: {@code Authorization: Bearer <key>}; the key's SHA-256 is compared with the
 * hash of every live key by {@link MessageDigest#isEqual} (constant time), all of them every time,
 * so how long a check takes does not depend on which key matched or how much of a hash did. The
 * key's role must include the route's ({@code admin} ⊇ {@code write} ⊇ {@code read}).
 *
 * <ul>
 *   <li>no header, another scheme, or an empty key: 401 {@code unauthorized} with
 *       {@code WWW-Authenticate: Bearer realm="twofold"};</li>
 *   <li>a key that is not live (never issued, or revoked): 401 with
 *       {@code WWW-Authenticate: Bearer realm="twofold", error="invalid_token"} (RFC 6750 §3.1);</li>
 *   <li>a live key whose role is too small: 403 {@code forbidden}, naming the key and both roles;</li>
 *   <li>before the keys were read once ({@link #replace} never called): 503
 *       {@code database-unavailable} with {@code Retry-After}, since nothing can be checked.</li>
 * </ul>
 *
 * <p>The key set is replaced whole ({@link #replace}), by whoever follows the key store
 * ({@link KeyFollower}); a request reads it once. Each admitted request notes when its key was
 * used (one volatile write); {@link #takeUses()} collects those for recording in batches. The name
 * of the admitted key is left in the request attribute {@link #CALLER_ATTRIBUTE} for audit lines.
 * Thread-safe.
 */
public final class KeyRing implements AccessPolicy {

    static final String SCHEME = "Bearer";
    static final String CHALLENGE = SCHEME + " realm=\"twofold\"";
    static final String INVALID_CHALLENGE = CHALLENGE + ", error=\"invalid_token\"";

    /** Why a request was refused, for the metrics. */
    public enum Refusal {
        /** No Authorization header, or an empty key. */
        MISSING,
        /** An Authorization header of another scheme than Bearer. */
        MALFORMED,
        /** A key that is not live: never issued, or revoked. */
        INVALID,
        /** A live key whose role does not include the route's. */
        ROLE;

        public String label() {
            return name().toLowerCase(Locale.ROOT);
        }
    }

    private final int retryAfterSeconds;
    private volatile Entry[] keys;
    private volatile Consumer<Refusal> refusals = refusal -> { };

    /** @param retryAfterSeconds Retry-After of the 503 sent before the keys were first read */
    public KeyRing(int retryAfterSeconds) {
        this.retryAfterSeconds = retryAfterSeconds;
    }

    /**
     * A ring that admits only {@code key}, with role {@code role}, under the name {@code name}: for
     * a throwaway server that must check keys the way the real one does.
     */
    public static KeyRing only(String key, String name, KeyRole role) {
        KeyRing ring = new KeyRing(1);
        ring.replace(List.of(new ApiKeys.LiveKey(0, name, role, ApiKeys.hash(key))));
        return ring;
    }

    /** Tells {@code listener} of every refused request (on the request thread; it must be quick). */
    public void onRefusal(Consumer<Refusal> listener) {
        this.refusals = listener;
    }

    /**
     * Makes {@code live} the keys accepted from now on. A key that stays keeps the time it was
     * last used and not yet collected, so no use is lost by a reload.
     */
    public void replace(List<ApiKeys.LiveKey> live) {
        Map<Long, Entry> previous = new HashMap<>();
        Entry[] now = keys;
        if (now != null) {
            for (Entry e : now) {
                previous.put(e.id, e);
            }
        }
        Entry[] next = new Entry[live.size()];
        for (int i = 0; i < next.length; i++) {
            ApiKeys.LiveKey k = live.get(i);
            Entry kept = previous.get(k.id());
            next[i] = kept != null && MessageDigest.isEqual(kept.hash, k.hash()) && kept.role == k.role()
                    && kept.name.equals(k.name()) ? kept : new Entry(k.id(), k.name(), k.role(), k.hash().clone());
        }
        keys = next;
    }

    /** Whether the keys were read at least once. */
    public boolean loaded() {
        return keys != null;
    }

    /** How many keys are live now (0 before the first read). */
    public int size() {
        Entry[] now = keys;
        return now == null ? 0 : now.length;
    }

    @Override
    public boolean ready() {
        return loaded();
    }

    @Override
    public void admit(Context ctx, Role needed) {
        Entry match = check(ctx.header("Authorization"), needed);
        ctx.attribute(CALLER_ATTRIBUTE, match.name);
    }

    /**
     * The live key {@code authorization} carries, when its role includes {@code needed}.
     *
     * @throws ProblemException 401, 403 or 503 as the class comment says
     */
    Entry check(String authorization, Role needed) {
        Entry[] now = keys;
        if (now == null) {
            throw new ProblemException(ProblemType.DATABASE_UNAVAILABLE, "API keys cannot be checked yet: the service"
                    + " has not read them from its database since it started; try again later",
                    Map.of("Retry-After", Integer.toString(retryAfterSeconds)));
        }
        String key = presentedKey(authorization, needed);
        byte[] hash = ApiKeys.hash(key);
        Entry match = null;
        for (Entry e : now) {
            // every live key is compared, whatever matched before: the time taken says nothing
            if (MessageDigest.isEqual(e.hash, hash)) {
                match = e;
            }
        }
        if (match == null) {
            throw refuse(Refusal.INVALID, ProblemType.UNAUTHORIZED, "the API key is not valid: it was never issued or"
                    + " has been revoked; ask an operator for a live key (twofold keys list shows them)",
                    INVALID_CHALLENGE);
        }
        match.lastUsedMillis = System.currentTimeMillis();
        if (!allows(match.role, needed)) {
            throw refuse(Refusal.ROLE, ProblemType.FORBIDDEN, "the API key '" + match.name + "' has the role "
                    + match.role.label() + "; this route needs " + label(needed) + (needed == Role.ADMIN ? ""
                    : " or higher") + " (admin includes write, write includes read)", null);
        }
        return match;
    }

    private String presentedKey(String authorization, Role needed) {
        if (authorization == null || authorization.isBlank()) {
            throw refuse(Refusal.MISSING, ProblemType.UNAUTHORIZED, "this route needs an API key with the role "
                    + label(needed) + " or higher: send Authorization: Bearer <key> (twofold keys create makes one)",
                    CHALLENGE);
        }
        String header = authorization.strip();
        int space = header.indexOf(' ');
        String scheme = space < 0 ? header : header.substring(0, space);
        if (!scheme.equalsIgnoreCase(SCHEME)) {
            throw refuse(Refusal.MALFORMED, ProblemType.UNAUTHORIZED, "the Authorization header must be 'Bearer <key>';"
                    + " other schemes are not accepted", CHALLENGE);
        }
        String key = space < 0 ? "" : header.substring(space + 1).strip();
        if (key.isEmpty()) {
            throw refuse(Refusal.MISSING, ProblemType.UNAUTHORIZED, "the Authorization header names the Bearer scheme"
                    + " but no key; send Authorization: Bearer <key>", CHALLENGE);
        }
        return key;
    }

    private ProblemException refuse(Refusal why, ProblemType type, String detail, String challenge) {
        refusals.accept(why);
        return new ProblemException(type, detail, challenge == null ? Map.of() : Map.of("WWW-Authenticate", challenge));
    }

    /**
     * When each key was last used since the previous call, by key id; a key without use since then
     * is left out. Give the batch back with {@link #notRecorded} when it could not be stored.
     */
    public Map<Long, Instant> takeUses() {
        Map<Long, Instant> uses = new HashMap<>();
        Entry[] now = keys;
        if (now != null) {
            for (Entry e : now) {
                long used = e.lastUsedMillis;
                if (used > e.collectedMillis) {
                    e.collectedMillis = used;
                    uses.put(e.id, Instant.ofEpochMilli(used));
                }
            }
        }
        return uses;
    }

    /** Uses taken by {@link #takeUses()} that could not be stored: the next batch carries them again. */
    public void notRecorded(Map<Long, Instant> uses) {
        Entry[] now = keys;
        if (now != null) {
            for (Entry e : now) {
                if (uses.containsKey(e.id)) {
                    e.collectedMillis = 0;
                }
            }
        }
    }

    static boolean allows(KeyRole has, Role needed) {
        return has.allows(switch (needed) {
            case READ -> KeyRole.READ;
            case WRITE -> KeyRole.WRITE;
            case ADMIN -> KeyRole.ADMIN;
        });
    }

    private static String label(Role role) {
        return role.name().toLowerCase(Locale.ROOT);
    }

    /** One live key: never the key itself, only its hash. */
    static final class Entry {
        final long id;
        final String name;
        final KeyRole role;
        final byte[] hash;
        volatile long lastUsedMillis;
        volatile long collectedMillis;

        Entry(long id, String name, KeyRole role, byte[] hash) {
            this.id = id;
            this.name = name;
            this.role = role;
            this.hash = hash;
        }
    }
}
