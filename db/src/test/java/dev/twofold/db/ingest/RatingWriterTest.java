package dev.twofold.db.ingest;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.BadInputException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import java.sql.Connection;
import java.sql.SQLException;
import java.sql.Statement;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;

class RatingWriterTest {

    static Database db;
    RatingWriter writer;

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
        Tables.clear(db);
        writer = new RatingWriter(db, RatingScale.DEFAULT);
    }

    static Instant at(long epochSeconds) {
        return Instant.ofEpochSecond(epochSeconds);
    }

    @Test
    void a_batch_is_committed_with_new_ids_and_counts() throws SQLException {
        WriteReport r = writer.upsertRatings(List.of(
                new RatingInput("ann", "pie", 4, at(100)),
                new RatingInput("ben", "pie", 2),
                new RatingInput("ann", "soup", 5)));
        assertEquals(new WriteReport(3, 3, 2, 2), r);
        assertEquals(List.of("ann,pie,4,100", "ann,soup,5", "ben,pie,2"), Tables.ratings(db));
    }

    @Test
    void duplicates_in_a_batch_and_against_stored_rows_follow_the_import_rule() throws SQLException {
        writer.upsertRatings(List.of(new RatingInput("ann", "pie", 3, at(200)), new RatingInput("ann", "soup", 3, at(200))));
        WriteReport r = writer.upsertRatings(List.of(
                new RatingInput("ann", "pie", 5, at(100)),      // older than stored: ignored
                new RatingInput("ann", "soup", 1, at(300)),
                new RatingInput("ann", "soup", 2, at(250)),     // older than the row before it: ignored
                new RatingInput("ben", "pie", 1),
                new RatingInput("ben", "pie", 4)));              // later untimed row wins
        assertEquals(List.of("ann,pie,3,200", "ann,soup,1,300", "ben,pie,4"), Tables.ratings(db));
        assertEquals(2, r.written());
    }

    @Test
    void every_bad_row_is_reported_by_index_and_nothing_is_written() throws SQLException {
        writer.upsertRatings(List.of(new RatingInput("ann", "pie", 3)));
        String before = Tables.checksum(db);
        BadInputException e = assertThrows(BadInputException.class, () -> writer.upsertRatings(Arrays.asList(
                new RatingInput("ann", "soup", 4),
                new RatingInput("", "soup", 4),
                new RatingInput("ann", "soup", 6),
                new RatingInput("ann", "soup", Double.NaN),
                null,
                new RatingInput("ann", "x".repeat(129), 3),
                new RatingInput("ann", "soup", 3, Instant.parse("+10000-01-01T00:00:00Z")))));
        assertEquals(List.of(
                "[1]: user is empty",
                "[2]: rating 6.0 is outside the scale 1..5",
                "[3]: rating NaN is not a finite number",
                "[4]: row is missing",
                "[5]: item is 129 characters long; ids are 1..128 characters",
                "[6]: time +10000-01-01T00:00:00Z is outside the years 1..9999"), e.problems());
        assertEquals(before, Tables.checksum(db));
    }

    @Test
    void batches_larger_than_the_limit_or_empty_are_refused() {
        List<RatingInput> big = new ArrayList<>();
        for (int i = 0; i <= RatingWriter.MAX_BATCH_ROWS; i++) {
            big.add(new RatingInput("ann", "pie-" + i, 3));
        }
        BadInputException e = assertThrows(BadInputException.class, () -> writer.upsertRatings(big));
        assertEquals("[]: the batch has 10001 rows; at most 10000 are accepted", e.getMessage());
        assertThrows(BadInputException.class, () -> writer.upsertRatings(List.of()));
    }

    @Test
    void trust_batches_default_the_weight_replace_it_and_refuse_self_trust() throws SQLException {
        WriteReport first = writer.upsertTrust(List.of(new TrustInput("ann", "ben"), new TrustInput("ben", "cleo", 0.5)));
        assertEquals(new WriteReport(2, 2, 3, 0), first);
        WriteReport second = writer.upsertTrust(List.of(new TrustInput("ann", "ben", 0.25), new TrustInput("ben", "cleo", 0.5)));
        assertEquals(1, second.written(), "an unchanged weight is not a write");
        assertEquals(List.of("ann,ben,0.25", "ben,cleo,0.5"), Tables.trust(db));
        BadInputException e = assertThrows(BadInputException.class, () -> writer.upsertTrust(List.of(
                new TrustInput("ann", "ann"), new TrustInput("ann", "ben", 0), new TrustInput("ann", "ben", 1.5))));
        assertEquals(List.of(
                "[0]: truster and trustee are both 'ann'; self-trust is not allowed",
                "[1]: weight 0.0 is outside (0,1]; use 1 for full trust",
                "[2]: weight 1.5 is outside (0,1]; use 1 for full trust"), e.problems());
    }

    @Test
    void forgetting_a_user_erases_ratings_trust_factors_and_the_id() throws SQLException {
        writer.upsertRatings(List.of(new RatingInput("ann", "pie", 4), new RatingInput("ben", "pie", 2)));
        writer.upsertTrust(List.of(new TrustInput("ann", "ben"), new TrustInput("ben", "ann"), new TrustInput("ben", "cleo")));
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement()) {
            s.execute("insert into models (rank, coupling, lambda, trust_weight, trust_alpha, scale_min, scale_max, global_mean,"
                    + " num_users, num_items) values (1, 'shared', 0.1, 0.1, 1, 1, 5, 3, 3, 1)");
            s.execute("insert into model_user_factors (model_id, user_idx, bias, factors)"
                    + " select 1, idx, 0, '\\x0000803f'::bytea from users");
            s.execute("insert into model_trust_factors (model_id, user_idx, factors) select 1, idx, '\\x0000803f'::bytea from users");
        }
        assertTrue(writer.forgetUser("ann"));
        assertFalse(writer.forgetUser("ann"));
        assertEquals(List.of("ben,pie,2"), Tables.ratings(db));
        assertEquals(List.of("ben,cleo,1"), Tables.trust(db));
        assertEquals(List.of("ben", "cleo"), Tables.userIds(db));
        assertEquals(List.of("2", "2"), Tables.rows(db, "select count(*)::text from model_user_factors"
                + " union all select count(*)::text from model_trust_factors"));
    }
}
