package dev.twofold.db.snapshot;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;

import dev.twofold.db.connect.Database;
import dev.twofold.db.ingest.RatingInput;
import dev.twofold.db.ingest.RatingScale;
import dev.twofold.db.ingest.RatingWriter;
import dev.twofold.db.ingest.TrustInput;
import dev.twofold.db.testing.TestDatabases;
import java.util.ArrayList;
import java.util.Collections;
import java.util.List;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

class HistoryReaderTest {

    static Database db;

    @BeforeAll
    static void open() {
        db = TestDatabases.fresh();
        RatingWriter writer = new RatingWriter(db, RatingScale.DEFAULT);
        writer.upsertRatings(List.of(
                new RatingInput("ann", "soup", 4),
                new RatingInput("ann", "pie", 2.5),
                new RatingInput("ben", "pie", 5),
                new RatingInput("ann", "soup", 3)));
        writer.upsertTrust(List.of(
                new TrustInput("ann", "ben", 0.5),
                new TrustInput("cleo", "ann"),
                new TrustInput("cleo", "ben", 0.25)));
    }

    @AfterAll
    static void close() {
        db.close();
    }

    @Test
    void each_users_ratings_and_trust_edges_come_back_sorted_by_index_in_the_order_asked() {
        IdDirectory ids = IdDirectory.load(db);
        List<String> users = List.of(ids.userIds());
        List<String> items = List.of(ids.itemIds());

        List<UserHistory> read = new HistoryReader(db).read(List.of("cleo", "ann", "nobody", "ann"));
        assertEquals(3, read.size(), "duplicates are read once");

        UserHistory cleo = read.get(0);
        assertEquals(users.indexOf("cleo"), cleo.user());
        assertEquals(0, cleo.numRatings());
        assertArrayEquals(sorted(users.indexOf("ann"), users.indexOf("ben")), cleo.trustees());

        UserHistory ann = read.get(1);
        assertEquals("ann", ann.userId());
        assertEquals(users.indexOf("ann"), ann.user());
        int soup = items.indexOf("soup");
        int pie = items.indexOf("pie");
        assertArrayEquals(sorted(soup, pie), ann.items());
        float[] expectedRatings = soup < pie ? new float[] {3f, 2.5f} : new float[] {2.5f, 3f};
        assertArrayEquals(expectedRatings, ann.ratings(), "the later rating of soup replaced the first");
        assertArrayEquals(new int[] {users.indexOf("ben")}, ann.trustees());
        assertArrayEquals(new float[] {0.5f}, ann.trustWeight());

        UserHistory nobody = read.get(2);
        assertEquals(-1, nobody.user());
        assertEquals(0, nobody.numRatings() + nobody.numTrustEdges());
    }

    @Test
    void an_empty_request_reads_nothing_and_too_many_ids_are_refused() {
        assertEquals(List.of(), new HistoryReader(db).read(List.of()));
        List<String> many = new ArrayList<>(Collections.nCopies(1, "x"));
        for (int i = 0; i < HistoryReader.MAX_USERS_PER_READ; i++) {
            many.add("cook-" + i);
        }
        assertThrows(IllegalArgumentException.class, () -> new HistoryReader(db).read(many));
    }

    private static int[] sorted(int a, int b) {
        return a < b ? new int[] {a, b} : new int[] {b, a};
    }
}
