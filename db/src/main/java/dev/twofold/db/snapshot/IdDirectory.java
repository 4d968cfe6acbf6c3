package dev.twofold.db.snapshot;

import dev.twofold.db.connect.Database;
import dev.twofold.db.internal.BinaryCopyReader;
import dev.twofold.db.internal.ReadOnlySnapshot;
import java.sql.ResultSet;
import java.sql.Statement;

/**
 * The external string ids behind the dense indices: {@code userIds[u]} is the id of user index u
 * (null where an index is unused), likewise for items.
 */
public record IdDirectory(String[] userIds, String[] itemIds) {

    /** Both id maps, read in one consistent snapshot. */
    public static IdDirectory load(Database database) {
        return ReadOnlySnapshot.read(database, "reading the user and item ids", (c, copy) -> {
            int numUsers;
            int numItems;
            try (Statement s = c.createStatement();
                 ResultSet rs = s.executeQuery("select (select coalesce(max(idx), -1) + 1 from users),"
                         + " (select coalesce(max(idx), -1) + 1 from items)")) {
                rs.next();
                numUsers = rs.getInt(1);
                numItems = rs.getInt(2);
            }
            String[] users = new String[numUsers];
            try (BinaryCopyReader in = BinaryCopyReader.open(copy, "select idx, external_id from users")) {
                while (in.nextRow()) {
                    int idx = in.int4();
                    users[idx] = in.text();
                }
            }
            String[] items = new String[numItems];
            try (BinaryCopyReader in = BinaryCopyReader.open(copy, "select idx, external_id from items")) {
                while (in.nextRow()) {
                    int idx = in.int4();
                    items[idx] = in.text();
                }
            }
            return new IdDirectory(users, items);
        });
    }
}
