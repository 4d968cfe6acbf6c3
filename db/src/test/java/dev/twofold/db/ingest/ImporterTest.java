package dev.twofold.db.ingest;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.BadInputException;
import dev.twofold.db.TwofoldException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.SQLException;
import java.util.List;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** File imports into a real PostgreSQL: what lands in the tables, and what is refused. */
class ImporterTest {

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
        Tables.clear(db);
    }

    private Path file(String name, String content) throws IOException {
        Path p = dir.resolve(name);
        Files.writeString(p, content, StandardCharsets.UTF_8);
        return p;
    }

    private ImportReport load(Path ratings, Path trust) {
        return new Importer(db, RatingScale.DEFAULT).importFiles(ratings, trust);
    }

    @Test
    void valid_files_land_in_the_tables_exactly() throws Exception {
        Path ratings = file("ratings.csv", """
                user,item,rating,time
                ann,apple-pie,5,1714588200
                ann,lentil-soup,3.5,2024-05-01T18:30:00Z
                ben,apple-pie,2,
                ben,risotto,4.25,2024-05-01T20:30:00+02:00
                """);
        Path trust = file("trust.csv", """
                truster,trustee,weight
                ann,ben,0.5
                ben,ann,
                cleo,ann,1
                """);
        ImportReport report = load(ratings, trust);

        assertEquals(List.of(
                "ann,apple-pie,5,1714588200",
                "ann,lentil-soup,3.5,1714588200",
                "ben,apple-pie,2",
                "ben,risotto,4.25,1714588200"), Tables.ratings(db));
        assertEquals(List.of("ann,ben,0.5", "ben,ann,1", "cleo,ann,1"), Tables.trust(db));
        assertEquals(List.of("ann", "ben", "cleo"), Tables.userIds(db), "new ids get indices in sorted order");
        assertEquals(List.of("apple-pie", "lentil-soup", "risotto"), Tables.itemIds(db));
        assertEquals(new ImportReport(4, 4, 3, 3, 3, 3, report.took(), ImportMode.APPEND, 0, 0), report);
    }

    @Test
    void a_file_without_times_keeps_the_later_line_of_a_pair() throws Exception {
        load(file("ratings.csv", """
                user,item,rating
                ann,apple-pie,1
                ben,apple-pie,2
                ann,apple-pie,4
                """), null);
        assertEquals(List.of("ann,apple-pie,4", "ben,apple-pie,2"), Tables.ratings(db));
    }

    @Test
    void with_times_the_latest_time_wins_whatever_the_line_order() throws Exception {
        load(file("ratings.csv", """
                user,item,rating,time
                ann,apple-pie,5,300
                ann,apple-pie,1,100
                ann,apple-pie,2,200
                """), null);
        assertEquals(List.of("ann,apple-pie,5,300"), Tables.ratings(db));
    }

    @Test
    void equal_times_keep_the_later_line() throws Exception {
        load(file("ratings.csv", """
                user,item,rating,time
                ann,apple-pie,5,300
                ann,apple-pie,1,300
                """), null);
        assertEquals(List.of("ann,apple-pie,1,300"), Tables.ratings(db));
    }

    @Test
    void mixed_timed_and_untimed_rows_are_applied_in_line_order() throws Exception {
        // Sequential rule: a row replaces the current one unless both have times and it is older.
        // soup: 5@300, then 4 (no time) replaces, then 2@100 replaces the untimed one -> 2@100.
        // pie: 3 (no time), then 5@300 replaces, then 1@200 is older -> 5@300.
        // stew: 1@500, then 2 (no time) replaces, and nothing follows -> 2 without time.
        load(file("ratings.csv", """
                user,item,rating,time
                ann,soup,5,300
                ann,soup,4,
                ann,soup,2,100
                ann,pie,3,
                ann,pie,5,300
                ann,pie,1,200
                ann,stew,1,500
                ann,stew,2,
                """), null);
        assertEquals(List.of("ann,pie,5,300", "ann,soup,2,100", "ann,stew,2"), Tables.ratings(db));
    }

    @Test
    void a_reimport_replaces_stored_ratings_unless_they_are_newer() throws Exception {
        load(file("first.csv", """
                user,item,rating,time
                ann,apple-pie,3,200
                ann,risotto,3,200
                ann,soup,3,
                ben,soup,3,200
                """), null);
        ImportReport second = load(file("second.csv", """
                user,item,rating,time
                ann,apple-pie,5,100
                ann,risotto,5,300
                ann,soup,5,100
                ben,soup,5,
                """), null);
        assertEquals(List.of("ann,apple-pie,3,200", "ann,risotto,5,300", "ann,soup,5,100", "ben,soup,5"), Tables.ratings(db));
        assertEquals(3, second.ratingsWritten(), "the older apple-pie rating was not written");
        assertEquals(0, second.newUsers());
    }

    @Test
    void importing_the_same_files_twice_changes_nothing() throws Exception {
        Path ratings = file("ratings.csv", "user,item,rating\nann,apple-pie,4\nben,soup,2\n");
        Path trust = file("trust.csv", "truster,trustee\nann,ben\n");
        load(ratings, trust);
        String before = Tables.checksum(db);
        ImportReport again = load(ratings, trust);
        assertEquals(before, Tables.checksum(db));
        assertEquals(0, again.ratingsWritten());
        assertEquals(0, again.trustWritten());
        assertEquals(0, again.newUsers() + again.newItems());
    }

    @Test
    void trust_keeps_the_later_line_and_a_reimport_replaces_the_weight() throws Exception {
        load(null, file("trust.csv", "truster,trustee,weight\nann,ben,0.2\nann,ben,0.7\n"));
        assertEquals(List.of("ann,ben,0.7"), Tables.trust(db));
        ImportReport r = load(null, file("trust2.csv", "truster,trustee,weight\nann,ben,0.9\n"));
        assertEquals(List.of("ann,ben,0.9"), Tables.trust(db));
        assertEquals(1, r.trustWritten());
    }

    @Test
    void quoted_fields_crlf_line_ends_a_byte_order_mark_and_utf8_ids_are_read() throws Exception {
        String content = "\uFEFFuser,item,rating\r\n"
                + "\"Zoë\",\"pie, apple\",4\r\n"
                + "\"say \"\"hi\"\"\",crème brûlée,5\r\n"
                + "\r\n"
                + "\"dan\",\"soup\",\"3\"";
        load(file("ratings.csv", content), null);
        assertEquals(List.of("Zoë,pie, apple,4", "dan,soup,3", "say \"hi\",crème brûlée,5"), Tables.ratings(db));
    }

    @Test
    void a_line_break_inside_quotes_is_one_field_and_later_lines_keep_their_numbers() throws Exception {
        Path ratings = file("ratings.csv", "user,item,rating\n\"two\nlines\",pie,4\nann,pie,9\n");
        BadInputException e = assertThrows(BadInputException.class, () -> load(ratings, null));
        assertEquals(List.of(
                ratings + ":2: user 'two?lines' contains a control character (U+000A)",
                ratings + ":4: rating 9 is outside the scale 1..5; fix the row or set --scale"), e.problems());
    }

    @Test
    void one_bad_row_among_thousands_refuses_the_import_and_leaves_the_tables_unchanged() throws Exception {
        load(file("seed.csv", "user,item,rating\ncook-1,recipe-1,4\n"), file("seed-trust.csv", "truster,trustee\ncook-1,cook-2\n"));
        String before = Tables.checksum(db);
        StringBuilder csv = new StringBuilder("user,item,rating\n");
        for (int line = 2; line <= 3000; line++) {
            double rating = line == 812 ? 7.0 : 1 + (line % 5);
            csv.append("cook-").append(line % 97).append(",recipe-").append(line % 131).append(',').append(rating).append('\n');
        }
        Path ratings = file("ratings.csv", csv.toString());
        BadInputException e = assertThrows(BadInputException.class, () -> load(ratings, null));

        assertEquals(List.of(ratings + ":812: rating 7.0 is outside the scale 1..5; fix the row or set --scale"), e.problems());
        assertEquals(1, e.totalProblems());
        assertEquals(TwofoldException.EXIT_DATA_ERROR, e.exitCode());
        assertEquals(before, Tables.checksum(db));
    }

    @Test
    void a_bad_trust_row_also_refuses_a_valid_ratings_file() throws Exception {
        String before = Tables.checksum(db);
        Path ratings = file("ratings.csv", "user,item,rating\nann,pie,4\n");
        Path trust = file("trust.csv", "truster,trustee\nann,ben\nben,ben\n");
        BadInputException e = assertThrows(BadInputException.class, () -> load(ratings, trust));
        assertEquals(List.of(trust + ":3: truster and trustee are both 'ben'; self-trust is not allowed"), e.problems());
        assertEquals(before, Tables.checksum(db));
    }

    @Test
    void more_than_fifty_bad_rows_list_fifty_and_count_the_rest() throws Exception {
        StringBuilder csv = new StringBuilder("user,item,rating\n");
        for (int i = 0; i < 120; i++) {
            csv.append("ann,pie-").append(i).append(",9\n");
        }
        Path ratings = file("ratings.csv", csv.toString());
        BadInputException e = assertThrows(BadInputException.class, () -> load(ratings, null));
        assertEquals(50, e.problems().size());
        assertEquals(120, e.totalProblems());
        assertEquals(ratings + ":2: rating 9 is outside the scale 1..5; fix the row or set --scale", e.problems().get(0));
        assertEquals(ratings + ":51: rating 9 is outside the scale 1..5; fix the row or set --scale", e.problems().get(49));
        assertTrue(e.report().endsWith("... and 70 more problems\n"), e.report());
        assertTrue(e.getMessage().contains("120 problems, nothing was written"), e.getMessage());
        assertEquals(0, Tables.ratings(db).size());
    }

    @Test
    void a_wrong_header_is_refused_with_the_expected_one() throws Exception {
        Path ratings = file("ratings.csv", "userid,item,score\nann,pie,4\n");
        BadInputException e = assertThrows(BadInputException.class, () -> load(ratings, null));
        assertEquals(List.of(ratings + ":1: the header is 'userid,item,score'; expected 'user,item,rating' or 'user,item,rating,time'"),
                e.problems());
    }

    @Test
    void an_empty_file_is_refused() throws Exception {
        Path trust = file("trust.csv", "");
        BadInputException e = assertThrows(BadInputException.class, () -> load(null, trust));
        assertEquals(List.of(trust + ":1: the file is empty; the first line must be the header 'truster,trustee' or 'truster,trustee,weight'"),
                e.problems());
    }

    @Test
    void a_missing_file_is_refused_before_anything_is_read() {
        Path missing = dir.resolve("nope.csv");
        BadInputException e = assertThrows(BadInputException.class, () -> load(missing, null));
        assertEquals(missing + ": no such file", e.getMessage());
    }

    @Test
    void every_rule_has_its_message() throws Exception {
        String ratingsCsv = String.join("\n",
                "user,item,rating,time",
                "ann,pie",                                   // 2
                "ann,pie,4,1,extra",                         // 3
                ",pie,4,",                                   // 4
                "ann,,4,",                                   // 5
                " ann,pie,4,",                               // 6
                "ann,pie ,4,",                               // 7
                "x".repeat(129) + ",pie,4,",                 // 8
                "ann,pie,five,",                             // 9
                "ann,pie,NaN,",                              // 10
                "ann,pie,1e999,",                            // 11
                "ann,pie,0.5,",                              // 12
                "ann,pie,4,yesterday",                       // 13
                "ann,pie,4,2024-05-01T18:30:00",             // 14
                "ann,pie,4,2024-05-01",                      // 15
                "ann,pie,4,1714588200000",                   // 16
                "ann,pie,4,-99999999999",                    // 17
                "an\"n,pie,4,",                              // 18
                "ann,\"pie\"x,4,",                           // 19
                "ann,pie,0x1p2,",                            // 20
                "ann,pie,4,",                                // 21 fine
                "");
        String trustCsv = String.join("\n",
                "truster,trustee,weight",
                "ann,ann,1",                                 // 2
                "ann,ben,0",                                 // 3
                "ann,ben,1.5",                               // 4
                "ann,ben,-0.5",                              // 5
                "ann,ben,heavy",                             // 6
                "ann,ben,Infinity",                          // 7
                "ann,\"unclosed,1",                          // 8
                "");
        Path ratings = file("r.csv", ratingsCsv);
        Path trust = file("t.csv", trustCsv);
        String r = ratings.toString();
        String t = trust.toString();
        BadInputException e = assertThrows(BadInputException.class, () -> load(ratings, trust));
        assertEquals(List.of(
                r + ":2: 2 fields, expected 4 (user,item,rating,time)",
                r + ":3: 5 fields, expected 4 (user,item,rating,time)",
                r + ":4: user is empty",
                r + ":5: item is empty",
                r + ":6: user ' ann' has leading or trailing whitespace; remove it",
                r + ":7: item 'pie ' has leading or trailing whitespace; remove it",
                r + ":8: user is 129 characters long; ids are 1..128 characters",
                r + ":9: rating 'five' is not a number",
                r + ":10: rating 'NaN' is not a number",
                r + ":11: rating 1e999 is not a finite number",
                r + ":12: rating 0.5 is outside the scale 1..5; fix the row or set --scale",
                r + ":13: time yesterday is neither epoch seconds nor ISO-8601 with an offset (like 2024-05-01T18:30:00Z)",
                r + ":14: time 2024-05-01T18:30:00 has no UTC offset; add Z or an offset like +02:00",
                r + ":15: time 2024-05-01 has no time of day; write it like 2024-05-01T00:00:00Z",
                r + ":16: time 1714588200000 is too large for epoch seconds (milliseconds?); use seconds or ISO-8601",
                r + ":17: time -99999999999 is outside the years 1..9999",
                r + ":18: a quote inside an unquoted field; quote the whole field and double inner quotes",
                r + ":19: characters after the closing quote of a field",
                r + ":20: rating '0x1p2' is not a number",
                t + ":2: truster and trustee are both 'ann'; self-trust is not allowed",
                t + ":3: weight 0 is outside (0,1]; use 1 for full trust",
                t + ":4: weight 1.5 is outside (0,1]; use 1 for full trust",
                t + ":5: weight -0.5 is outside (0,1]; use 1 for full trust",
                t + ":6: weight 'heavy' is not a number",
                t + ":7: weight 'Infinity' is not a number",
                t + ":8: a quoted field starting on line 8 is never closed"), e.problems());
        assertEquals(0, Tables.ratings(db).size());
    }

    @Test
    void a_control_character_in_an_id_is_refused() throws Exception {
        Path ratings = file("ratings.csv", "user,item,rating\n\"an\tn\",pie,4\n");
        BadInputException e = assertThrows(BadInputException.class, () -> load(ratings, null));
        assertEquals(List.of(ratings + ":2: user 'an?n' contains a control character (U+0009)"), e.problems());
    }

    @Test
    void bytes_that_are_not_utf8_are_refused_with_their_line() throws Exception {
        Path ratings = dir.resolve("latin1.csv");
        byte[] header = "user,item,rating\nann,pie,4\n".getBytes(StandardCharsets.US_ASCII);
        byte[] bad = "cr\u00e8me,pie,4\n".getBytes(StandardCharsets.ISO_8859_1);
        byte[] all = new byte[header.length + bad.length];
        System.arraycopy(header, 0, all, 0, header.length);
        System.arraycopy(bad, 0, all, header.length, bad.length);
        Files.write(ratings, all);
        BadInputException e = assertThrows(BadInputException.class, () -> load(ratings, null));
        assertEquals(List.of(ratings + ":3: not valid UTF-8 text; save the file as UTF-8"), e.problems());
    }

    @Test
    void a_custom_scale_accepts_what_the_default_refuses() throws Exception {
        Path ratings = file("ratings.csv", "user,item,rating\nann,pie,0.5\nann,soup,10\n");
        new Importer(db, new RatingScale(0.5f, 10f)).importFiles(ratings, null);
        assertEquals(List.of("ann,pie,0.5", "ann,soup,10"), Tables.ratings(db));
    }
}
