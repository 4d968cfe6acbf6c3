package dev.twofold.db.ingest;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.BadInputException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.progress.Progress;
import dev.twofold.db.testing.TestDatabases;
import java.io.IOException;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.SQLException;
import java.util.List;
import java.util.concurrent.atomic.AtomicLong;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** {@code --mode append} and {@code --mode replace} against a real PostgreSQL: exactly what the tables hold after each. */
class ImportModesTest {

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

    private ImportReport load(Path ratings, Path trust, ImportMode mode) {
        return new Importer(db, RatingScale.DEFAULT).importFiles(ratings, trust, mode);
    }

    private void loadFirstNight() throws IOException {
        load(file("night1-ratings.csv", """
                user,item,rating,time
                ann,apple-pie,5,1000
                ann,bread,3,1000
                ben,apple-pie,4,1000
                """), file("night1-trust.csv", """
                truster,trustee,weight
                ann,ben,1
                ben,cleo,0.5
                """), ImportMode.APPEND);
    }

    @Test
    void append_then_replace_leave_exactly_the_expected_rows() throws Exception {
        loadFirstNight();
        ImportReport appended = load(file("night2-ratings.csv", """
                user,item,rating,time
                ann,bread,4,2000
                cleo,cake,2,2000
                """), file("night2-trust.csv", """
                truster,trustee,weight
                cleo,ann,1
                """), ImportMode.APPEND);
        assertEquals(List.of("ann,apple-pie,5,1000", "ann,bread,4,2000", "ben,apple-pie,4,1000", "cleo,cake,2,2000"),
                Tables.ratings(db), "append merges: the newer rating replaces, the new pair is added, the rest stays");
        assertEquals(List.of("ann,ben,1", "ben,cleo,0.5", "cleo,ann,1"), Tables.trust(db));
        assertEquals(2, appended.ratingsWritten());
        assertEquals(0, appended.ratingsDeleted());

        ImportReport replaced = load(file("full-ratings.csv", """
                user,item,rating,time
                ann,apple-pie,5,1000
                cleo,cake,1,500
                dan,pie,3,3000
                """), file("full-trust.csv", """
                truster,trustee,weight
                ben,ann,0.25
                """), ImportMode.REPLACE);
        assertEquals(List.of("ann,apple-pie,5,1000", "cleo,cake,1,500", "dan,pie,3,3000"), Tables.ratings(db),
                "replace: exactly the file, even where the stored rating had a later time");
        assertEquals(List.of("ben,ann,0.25"), Tables.trust(db));
        assertEquals(3, replaced.ratingsRead());
        assertEquals(2, replaced.ratingsWritten(), "one changed, one new; the unchanged row is not rewritten");
        assertEquals(2, replaced.ratingsDeleted(), "ann,bread and ben,apple-pie");
        assertEquals(1, replaced.trustWritten());
        assertEquals(3, replaced.trustDeleted());
        assertEquals(ImportMode.REPLACE, replaced.mode());
        assertEquals(List.of("ann", "ben", "cleo", "dan"), Tables.userIds(db), "ids stay known; indices are never reused");
    }

    @Test
    void replacing_with_the_same_files_again_changes_nothing() throws Exception {
        loadFirstNight();
        Path ratings = dir.resolve("night1-ratings.csv");
        Path trust = dir.resolve("night1-trust.csv");
        String before = Tables.checksum(db);
        ImportReport again = load(ratings, trust, ImportMode.REPLACE);
        assertEquals(before, Tables.checksum(db));
        assertEquals(0, again.ratingsWritten() + again.ratingsDeleted() + again.trustWritten() + again.trustDeleted());
    }

    @Test
    void replace_touches_only_the_kinds_of_data_a_file_is_given_for() throws Exception {
        loadFirstNight();
        load(file("only-ratings.csv", """
                user,item,rating
                ben,bread,2
                """), null, ImportMode.REPLACE);
        assertEquals(List.of("ben,bread,2"), Tables.ratings(db));
        assertEquals(List.of("ann,ben,1", "ben,cleo,0.5"), Tables.trust(db), "no trust file: trust stays");
    }

    @Test
    void replacing_with_a_header_only_file_empties_that_table() throws Exception {
        loadFirstNight();
        ImportReport report = load(null, file("no-trust.csv", "truster,trustee\n"), ImportMode.REPLACE);
        assertEquals(List.of(), Tables.trust(db));
        assertEquals(2, report.trustDeleted());
        assertEquals(3, Tables.ratings(db).size());
    }

    @Test
    void a_bad_row_refuses_a_replace_and_leaves_the_old_data_set_whole() throws Exception {
        loadFirstNight();
        String before = Tables.checksum(db);
        assertThrows(BadInputException.class, () -> load(file("bad.csv", """
                user,item,rating
                ann,apple-pie,4
                ben,bread,9
                """), null, ImportMode.REPLACE));
        assertEquals(before, Tables.checksum(db));
    }

    @Test
    void api_batches_land_in_the_same_tables_and_repeating_one_changes_nothing() throws Exception {
        loadFirstNight();
        RatingWriter writer = new RatingWriter(db, RatingScale.DEFAULT);
        List<RatingInput> batch = List.of(new RatingInput("ann", "bread", 2), new RatingInput("erin", "bread", 5));
        assertEquals(2, writer.upsertRatings(batch).written());
        String after = Tables.checksum(db);
        assertEquals(0, writer.upsertRatings(batch).written(), "the same batch again writes nothing");
        assertEquals(after, Tables.checksum(db));
        writer.upsertTrust(List.of(new TrustInput("ann", "ben", 1), new TrustInput("erin", "ann", 0.5)));
        writer.upsertTrust(List.of(new TrustInput("ann", "ben", 1), new TrustInput("erin", "ann", 0.5)));
        assertEquals(List.of("ann,ben,1", "ben,cleo,0.5", "erin,ann,0.5"), Tables.trust(db), "one row per pair");
        assertEquals(List.of("ann,apple-pie,5,1000", "ann,bread,2", "ben,apple-pie,4,1000", "erin,bread,5"),
                Tables.ratings(db));

        // a file import of what the API wrote is idempotent too
        ImportReport report = load(file("api-echo.csv", """
                user,item,rating
                ann,bread,2
                erin,bread,5
                """), null, ImportMode.APPEND);
        assertEquals(0, report.ratingsWritten());
    }

    @Test
    void the_mode_is_parsed_by_name() {
        assertEquals(ImportMode.REPLACE, ImportMode.parse("replace"));
        IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> ImportMode.parse("merge"));
        assertEquals("mode 'merge' is not one of append, replace", e.getMessage());
    }

    @Test
    void progress_reports_each_phase_of_a_large_import() throws Exception {
        StringBuilder csv = new StringBuilder("user,item,rating\n");
        int rows = 3 * Importer.PROGRESS_EVERY_ROWS;
        for (int i = 0; i < rows; i++) {
            csv.append("cook-").append(i % 500).append(",recipe-").append(i / 500).append(",4\n");
        }
        Path file = file("large.csv", csv.toString());
        Recording progress = new Recording();
        new Importer(db, RatingScale.DEFAULT, progress).importFiles(file, null, ImportMode.APPEND);
        String log = progress.log.toString();
        assertTrue(log.startsWith("start reading large.csv " + Files.size(file) + "\n"), log);
        assertTrue(log.contains("finish " + rows + " rows\nstart writing ratings " + rows + "\n"), log);
        assertTrue(log.endsWith("finish " + rows + " ratings written\n"), log);
        long advances = log.lines().filter(l -> l.startsWith("advance")).count();
        assertTrue(advances >= 5, "reading and writing both advanced: " + log);
    }

    @Test
    void plain_progress_lines_appear_only_for_phases_that_run_long() {
        StringWriter out = new StringWriter();
        AtomicLong clock = new AtomicLong();
        ImportProgress p = ImportProgress.showing(new Progress(new PrintWriter(out), false, clock::get, () -> 0L, "import"));
        p.start("reading ratings.csv", 1000);
        clock.addAndGet(1_000_000_000L);
        p.advance(100);
        p.finish("");
        assertEquals("", out.toString(), "a phase shorter than the log interval logs nothing");

        p.start("writing ratings", 1000);
        clock.addAndGet(Progress.LOG_INTERVAL_MS * 1_000_000L);
        p.advance(250);
        clock.addAndGet(1_000_000_000L);
        p.advance(300); // within the interval: no line
        clock.addAndGet(Progress.LOG_INTERVAL_MS * 1_000_000L);
        p.finish("1000 ratings written");
        assertEquals("""
                1970-01-01T00:00:00Z import: writing ratings 25%, 0:05 elapsed, ETA 0:15
                1970-01-01T00:00:00Z import: writing ratings 100%, 0:11 elapsed  1000 ratings written
                """, out.toString());
    }

    /** Records the calls, one line each. */
    private static final class Recording implements ImportProgress {
        final StringBuilder log = new StringBuilder();

        @Override
        public void start(String phase, long total) {
            log.append("start ").append(phase).append(' ').append(total).append('\n');
        }

        @Override
        public void advance(long done) {
            log.append("advance ").append(done).append('\n');
        }

        @Override
        public void finish(String detail) {
            log.append("finish ").append(detail).append('\n');
        }
    }
}
