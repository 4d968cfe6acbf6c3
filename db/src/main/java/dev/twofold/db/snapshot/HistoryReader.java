package dev.twofold.db.snapshot;

import dev.twofold.db.connect.Database;
import dev.twofold.db.internal.ReadOnlySnapshot;
import java.sql.Array;
import java.sql.PreparedStatement;
import java.sql.ResultSet;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * Reads the current ratings and trust edges of a few users in one consistent snapshot: what the
 * service needs to fold a user in after a write, without reading everyone's data. Two queries per
 * call whatever the number of users (ids are passed as one array), each using the primary keys
 * of {@code ratings} and {@code trust}.
 */
public final class HistoryReader {

    /** Most ids per call; callers split larger sets. */
    public static final int MAX_USERS_PER_READ = 10_000;

    private final Database database;

    public HistoryReader(Database database) {
        this.database = database;
    }

    /**
     * The histories of {@code userIds} in the order given (duplicates read once and returned once,
     * at their first position). An id nobody has gives {@link UserHistory#unknown}.
     *
     * @throws IllegalArgumentException for more than {@link #MAX_USERS_PER_READ} distinct ids
     */
    public List<UserHistory> read(List<String> userIds) {
        String[] distinct = userIds.stream().distinct().toArray(String[]::new);
        if (distinct.length > MAX_USERS_PER_READ) {
            throw new IllegalArgumentException(distinct.length + " users asked for; read at most "
                    + MAX_USERS_PER_READ + " per call");
        }
        if (distinct.length == 0) {
            return List.of();
        }
        return ReadOnlySnapshot.read(database, "reading the history of " + distinct.length + " users", (c, copy) -> {
            Map<String, Builder> byId = new LinkedHashMap<>();
            for (String id : distinct) {
                byId.put(id, new Builder(id));
            }
            Array ids = c.createArrayOf("text", distinct);
            try (PreparedStatement ps = c.prepareStatement("""
                    select u.external_id, u.idx, r.item_idx, r.rating
                    from users u left join ratings r on r.user_idx = u.idx
                    where u.external_id = any(?)
                    order by u.idx, r.item_idx""")) {
                ps.setArray(1, ids);
                try (ResultSet rs = ps.executeQuery()) {
                    while (rs.next()) {
                        Builder b = byId.get(rs.getString(1));
                        b.user = rs.getInt(2);
                        int item = rs.getInt(3);
                        if (!rs.wasNull()) {
                            b.addRating(item, rs.getFloat(4));
                        }
                    }
                }
            }
            try (PreparedStatement ps = c.prepareStatement("""
                    select u.external_id, t.trustee_idx, t.weight
                    from users u join trust t on t.truster_idx = u.idx
                    where u.external_id = any(?)
                    order by u.idx, t.trustee_idx""")) {
                ps.setArray(1, ids);
                try (ResultSet rs = ps.executeQuery()) {
                    while (rs.next()) {
                        byId.get(rs.getString(1)).addTrust(rs.getInt(2), rs.getFloat(3));
                    }
                }
            }
            List<UserHistory> out = new ArrayList<>(byId.size());
            for (Builder b : byId.values()) {
                out.add(b.build());
            }
            return out;
        });
    }

    /** One user's rows as they arrive. */
    private static final class Builder {
        final String id;
        int user = -1;
        int[] items = new int[8];
        float[] ratings = new float[8];
        int numRatings;
        int[] trustees = new int[4];
        float[] weights = new float[4];
        int numTrust;

        Builder(String id) {
            this.id = id;
        }

        void addRating(int item, float rating) {
            if (numRatings == items.length) {
                items = Arrays.copyOf(items, 2 * numRatings);
                ratings = Arrays.copyOf(ratings, 2 * numRatings);
            }
            items[numRatings] = item;
            ratings[numRatings++] = rating;
        }

        void addTrust(int trustee, float weight) {
            if (numTrust == trustees.length) {
                trustees = Arrays.copyOf(trustees, 2 * numTrust);
                weights = Arrays.copyOf(weights, 2 * numTrust);
            }
            trustees[numTrust] = trustee;
            weights[numTrust++] = weight;
        }

        UserHistory build() {
            if (user < 0) {
                return UserHistory.unknown(id);
            }
            return new UserHistory(id, user, Arrays.copyOf(items, numRatings), Arrays.copyOf(ratings, numRatings),
                    Arrays.copyOf(trustees, numTrust), Arrays.copyOf(weights, numTrust));
        }
    }
}
