package dev.twofold.db.ingest;

import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;

/**
 * The distinct external ids met in an import, numbered in order of first appearance (local ids).
 * Only ids that passed {@link FieldRules#id} are added, so an id found here needs no second check.
 */
final class IdDictionary {

    private final HashMap<String, Integer> locals = new HashMap<>();
    private final List<String> ids = new ArrayList<>();
    /** Dense database index of each local id, once resolved. */
    int[] idx;

    /** The local id of {@code id}, or -1 when it has not been met. */
    int find(String id) {
        Integer known = locals.get(id);
        return known == null ? -1 : known;
    }

    int local(String id) {
        Integer known = locals.get(id);
        if (known != null) {
            return known;
        }
        int next = ids.size();
        locals.put(id, next);
        ids.add(id);
        return next;
    }

    int size() {
        return ids.size();
    }

    String id(int local) {
        return ids.get(local);
    }
}
