package dev.twofold.db.snapshot;

import dev.twofold.db.connect.Database;

/**
 * The external string ids behind the dense indices: {@code userIds[u]} is the id of user index u
 * (null where an index is unused), likewise for items.
 */
public record IdDirectory(String[] userIds, String[] itemIds) {

    public static IdDirectory load(Database database) {
        throw new UnsupportedOperationException("db helper implements this");
    }
}
