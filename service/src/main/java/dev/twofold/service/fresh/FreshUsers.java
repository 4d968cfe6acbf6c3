package dev.twofold.service.fresh;

import java.util.ArrayList;
import java.util.Iterator;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.concurrent.ConcurrentHashMap;

/**
 * The users folded in against one model, at most {@code capacity} of them: reads are lock-free
 * (a concurrent map); writes are serialised and, when full, drop the user folded longest ago. A
 * dropped user is served as the model knows them until the next model load, which reads their
 * ratings again (so their rated items stay excluded from then on).
 *
 * <p>Memory per user: their history (8 bytes per rating and per trust edge), a k-float vector, the
 * rated list (4 bytes per rating) and about 200 bytes of objects.
 */
public final class FreshUsers {

    private final int capacity;
    private final ConcurrentHashMap<String, FreshUser> byId = new ConcurrentHashMap<>();
    /** Oldest write first; guarded by {@code this}. */
    private final LinkedHashMap<String, FreshUser> byAge = new LinkedHashMap<>();

    public FreshUsers(int capacity) {
        if (capacity < 0) {
            throw new IllegalArgumentException("capacity " + capacity + " must be >= 0");
        }
        this.capacity = capacity;
    }

    /** The user's folded state, or null when they were not folded in (or were dropped). */
    public FreshUser get(String userId) {
        return byId.get(userId);
    }

    /** Adds or replaces a user; a later write replaces an earlier one only (by sequence). */
    public synchronized void put(FreshUser user) {
        FreshUser current = byAge.get(user.userId());
        if (current != null && current.sequence() > user.sequence()) {
            return;
        }
        byAge.remove(user.userId());
        if (capacity == 0) {
            byId.remove(user.userId());
            return;
        }
        byAge.put(user.userId(), user);
        byId.put(user.userId(), user);
        Iterator<Map.Entry<String, FreshUser>> oldest = byAge.entrySet().iterator();
        while (byAge.size() > capacity) {
            String id = oldest.next().getKey();
            oldest.remove();
            byId.remove(id);
        }
    }

    /** Forgets a user (their data was erased). */
    public synchronized void remove(String userId) {
        byAge.remove(userId);
        byId.remove(userId);
    }

    /** Every folded user, oldest write first. */
    public synchronized List<FreshUser> all() {
        return new ArrayList<>(byAge.values());
    }

    public int size() {
        return byId.size();
    }

    public int capacity() {
        return capacity;
    }
}
