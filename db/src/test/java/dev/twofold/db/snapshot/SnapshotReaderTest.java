package dev.twofold.db.snapshot;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;

import dev.twofold.db.connect.Database;
import dev.twofold.db.ingest.Importer;
import dev.twofold.db.ingest.RatingScale;
import dev.twofold.db.testing.TestDatabases;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.SQLException;
import java.sql.Statement;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

class SnapshotReaderTest {

    static Database db;

    @TempDir
    Path dir;

    @BeforeAll
    static void open() {
        db = TestDatabases.fresh();
    }

    @AfterAll
    static void close() {
        db.close();
    }

    @BeforeEach
    void empty() throws SQLException {
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement()) {
            s.execute("truncate ratings, trust, users, items restart identity cascade");
        }
    }

    @Test
    void an_empty_database_gives_empty_arrays() {
        Snapshot s = new SnapshotReader(db).read();
        assertEquals(0, s.numUsers());
        assertEquals(0, s.numItems());
        assertEquals(0, s.numRatings());
        assertEquals(0, s.numTrustEdges());
        IdDirectory ids = IdDirectory.load(db);
        assertEquals(0, ids.userIds().length);
    }

    @Test
    void the_snapshot_holds_what_was_imported_sorted_by_user_and_item() throws IOException {
        Path ratings = dir.resolve("ratings.csv");
        Files.writeString(ratings, """
                user,item,rating,time
                cleo,soup,2,
                ann,pie,4.5,1714588200
                ben,pie,1,2024-05-01T18:30:00.750Z
                ann,soup,3,
                """);
        Path trust = dir.resolve("trust.csv");
        Files.writeString(trust, """
                truster,trustee,weight
                ben,ann,0.25
                ann,cleo,
                dan,ann,1
                """);
        new Importer(db, RatingScale.DEFAULT).importFiles(ratings, trust);

        Snapshot s = new SnapshotReader(db).read();
        IdDirectory ids = IdDirectory.load(db);
        // New ids are numbered in sorted order from 0: ann 0, ben 1, cleo 2, dan 3; pie 0, soup 1.
        assertArrayEquals(new String[] {"ann", "ben", "cleo", "dan"}, ids.userIds());
        assertArrayEquals(new String[] {"pie", "soup"}, ids.itemIds());
        assertEquals(4, s.numUsers());
        assertEquals(2, s.numItems());
        assertArrayEquals(new int[] {0, 0, 1, 2}, s.ratingUser());
        assertArrayEquals(new int[] {0, 1, 0, 1}, s.ratingItem());
        assertArrayEquals(new float[] {4.5f, 3f, 1f, 2f}, s.rating());
        assertArrayEquals(new long[] {1714588200L, Snapshot.NO_TIME, 1714588200L, Snapshot.NO_TIME}, s.ratingTime(),
                "times are whole epoch seconds, fractions cut");
        assertArrayEquals(new int[] {0, 1, 3}, s.truster());
        assertArrayEquals(new int[] {2, 0, 0}, s.trustee());
        assertArrayEquals(new float[] {1f, 0.25f, 1f}, s.trustWeight());
    }

    @Test
    void unused_indices_stay_null_in_the_directory_and_count_in_the_index_space() throws SQLException {
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement()) {
            s.execute("insert into users (external_id) values ('ann'), ('ben'), ('cleo')");
            s.execute("delete from users where external_id = 'ben'");
            s.execute("insert into items (external_id) values ('pie')");
            s.execute("insert into ratings (user_idx, item_idx, rating) values (2, 0, 5)");
        }
        Snapshot snap = new SnapshotReader(db).read();
        IdDirectory ids = IdDirectory.load(db);
        assertEquals(3, snap.numUsers());
        assertEquals("ann", ids.userIds()[0]);
        assertNull(ids.userIds()[1]);
        assertEquals("cleo", ids.userIds()[2]);
        assertArrayEquals(new int[] {2}, snap.ratingUser());
    }

    @Test
    void a_large_snapshot_round_trips_every_value() throws SQLException {
        int users = 300;
        int items = 200;
        List<String> expected = new ArrayList<>();
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement()) {
            s.execute("insert into users (external_id) select 'cook-' || g from generate_series(0, " + (users - 1) + ") g");
            s.execute("insert into items (external_id) select 'recipe-' || g from generate_series(0, " + (items - 1) + ") g");
            s.execute("insert into ratings (user_idx, item_idx, rating, rated_at) select u, i, 1 + ((u * 7 + i) % 9) / 2.0,"
                    + " case when (u + i) % 3 = 0 then null else to_timestamp(1700000000 + u * 1000 + i) end"
                    + " from generate_series(0, " + (users - 1) + ") u, generate_series(0, " + (items - 1) + ") i where (u * 31 + i * 17) % 5 = 0");
        }
        Snapshot snap = new SnapshotReader(db).read();
        for (int k = 0; k < snap.numRatings(); k++) {
            int u = snap.ratingUser()[k];
            int i = snap.ratingItem()[k];
            assertEquals(0, (u * 31 + i * 17) % 5);
            assertEquals(1 + ((u * 7 + i) % 9) / 2.0f, snap.rating()[k]);
            assertEquals((u + i) % 3 == 0 ? Snapshot.NO_TIME : 1700000000L + u * 1000L + i, snap.ratingTime()[k]);
            expected.add(u + "," + i);
        }
        assertEquals(users * items / 5, snap.numRatings());
        List<String> sorted = new ArrayList<>(expected);
        sorted.sort((a, b) -> {
            String[] x = a.split(",");
            String[] y = b.split(",");
            int cu = Integer.compare(Integer.parseInt(x[0]), Integer.parseInt(y[0]));
            return cu != 0 ? cu : Integer.compare(Integer.parseInt(x[1]), Integer.parseInt(y[1]));
        });
        assertEquals(sorted, expected, "sorted by user, then item");
    }
}
