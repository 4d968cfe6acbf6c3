package dev.twofold.db.snapshot;

import dev.twofold.db.connect.Database;
import dev.twofold.db.internal.BinaryCopyReader;
import dev.twofold.db.internal.ReadOnlySnapshot;
import java.sql.ResultSet;
import java.sql.Statement;

/**
 * Reads all ratings and trust edges in one REPEATABLE READ transaction, as primitive arrays, with
 * binary COPY (no result-set objects per row). Ratings come sorted by (user, item) and trust edges
 * by (truster, trustee), so the same data always gives the same arrays (and the same seeded split).
 */
public final class SnapshotReader {

    private final Database database;

    public SnapshotReader(Database database) {
        this.database = database;
    }

    public Snapshot read() {
        return ReadOnlySnapshot.read(database, "reading the ratings and trust snapshot", (c, copy) -> {
            int numUsers;
            int numItems;
            int numRatings;
            int numTrust;
            try (Statement s = c.createStatement();
                 ResultSet rs = s.executeQuery("select (select coalesce(max(idx), -1) + 1 from users),"
                         + " (select coalesce(max(idx), -1) + 1 from items),"
                         + " (select count(*) from ratings), (select count(*) from trust)")) {
                rs.next();
                numUsers = rs.getInt(1);
                numItems = rs.getInt(2);
                numRatings = Math.toIntExact(rs.getLong(3));
                numTrust = Math.toIntExact(rs.getLong(4));
            }
            int[] ratingUser = new int[numRatings];
            int[] ratingItem = new int[numRatings];
            float[] rating = new float[numRatings];
            long[] ratingTime = new long[numRatings];
            int n = 0;
            try (BinaryCopyReader in = BinaryCopyReader.open(copy,
                    "select user_idx, item_idx, rating, rated_at from ratings order by user_idx, item_idx")) {
                while (in.nextRow()) {
                    ratingUser[n] = in.int4();
                    ratingItem[n] = in.int4();
                    rating[n] = in.float4();
                    long micros = in.timestamptzOr(Long.MIN_VALUE);
                    ratingTime[n] = micros == Long.MIN_VALUE ? Snapshot.NO_TIME : Math.floorDiv(micros, 1_000_000L);
                    n++;
                }
            }
            int[] truster = new int[numTrust];
            int[] trustee = new int[numTrust];
            float[] weight = new float[numTrust];
            int m = 0;
            try (BinaryCopyReader in = BinaryCopyReader.open(copy,
                    "select truster_idx, trustee_idx, weight from trust order by truster_idx, trustee_idx")) {
                while (in.nextRow()) {
                    truster[m] = in.int4();
                    trustee[m] = in.int4();
                    weight[m] = in.float4();
                    m++;
                }
            }
            return new Snapshot(numUsers, numItems, ratingUser, ratingItem, rating, ratingTime, truster, trustee, weight);
        });
    }
}
