package dev.twofold.db.ingest;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.BadInputException;
import dev.twofold.db.TwofoldException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import java.io.IOException;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.SQLException;
import java.util.List;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import picocli.CommandLine;

/** {@code twofold import} end to end against a real database, with the launcher's error mapping. */
class ImportCommandTest {

    static Database db;

    @TempDir
    Path dir;

    final StringWriter out = new StringWriter();
    final StringWriter err = new StringWriter();

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

    private int run(String... args) {
        CommandLine cli = new CommandLine(new ImportCommand(TestDatabases.environment(db)));
        cli.setOut(new PrintWriter(out, true));
        cli.setErr(new PrintWriter(err, true));
        // As the launcher does: a Twofold failure prints its report and exits with its code.
        cli.setExecutionExceptionHandler((e, cmd, parsed) -> {
            cmd.getErr().print(e instanceof BadInputException b ? b.report() : e.getMessage() + "\n");
            return e instanceof TwofoldException t ? t.exitCode() : 1;
        });
        return cli.execute(args);
    }

    @Test
    void importing_files_prints_counts_and_time() throws IOException, SQLException {
        Path ratings = Files.writeString(dir.resolve("ratings.csv"), "user,item,rating\nann,pie,4\nben,pie,5\n");
        Path trust = Files.writeString(dir.resolve("trust.csv"), "truster,trustee\nann,ben\n");
        assertEquals(0, run("--ratings", ratings.toString(), "--trust", trust.toString()));
        String text = out.toString();
        assertTrue(text.contains(ratings + ": 2 rows read, 2 ratings written"), text);
        assertTrue(text.contains(trust + ": 1 rows read, 1 trust edges written"), text);
        assertTrue(text.contains("2 new users, 1 new items; committed in "), text);
        assertEquals(List.of("ann,pie,4", "ben,pie,5"), Tables.ratings(db));
    }

    @Test
    void a_scale_option_changes_what_is_accepted() throws IOException, SQLException {
        Path ratings = Files.writeString(dir.resolve("ratings.csv"), "user,item,rating\nann,pie,9.5\n");
        assertEquals(0, run("--ratings", ratings.toString(), "--scale", "0.5..10"));
        assertEquals(List.of("ann,pie,9.5"), Tables.ratings(db));
    }

    @Test
    void a_bad_row_exits_65_with_file_and_line_and_writes_nothing() throws IOException, SQLException {
        Path ratings = Files.writeString(dir.resolve("ratings.csv"), "user,item,rating\nann,pie,4\nann,soup,7.0\n");
        assertEquals(65, run("--ratings", ratings.toString()));
        assertTrue(err.toString().contains(ratings + ":3: rating 7.0 is outside the scale 1..5; fix the row or set --scale"), err.toString());
        assertEquals(List.of(), Tables.ratings(db));
    }

    @Test
    void a_missing_file_is_a_usage_error() {
        assertEquals(2, run("--ratings", dir.resolve("nope.csv").toString()));
        assertTrue(err.toString().contains("--ratings " + dir.resolve("nope.csv") + ": no such file"), err.toString());
    }

    @Test
    void no_file_at_all_is_a_usage_error() {
        assertEquals(2, run());
        assertTrue(err.toString().contains("give --ratings FILE, --trust FILE or both"), err.toString());
    }

    @Test
    void a_malformed_scale_is_a_usage_error() {
        assertEquals(2, run("--trust", "t.csv", "--scale", "1-5"));
        assertTrue(err.toString().contains("'1-5' is not a scale; write MIN..MAX"), err.toString());
        assertEquals(2, run("--trust", "t.csv", "--scale", "5..1"));
        assertTrue(err.toString().contains("needs a finite MIN below MAX"), err.toString());
    }

    @Test
    void replace_mode_says_how_many_stored_rows_it_deleted() throws IOException, SQLException {
        Path first = Files.writeString(dir.resolve("first.csv"), "user,item,rating\nann,pie,4\nben,pie,5\n");
        assertEquals(0, run("--ratings", first.toString(), "--quiet"));
        Path full = Files.writeString(dir.resolve("full.csv"), "user,item,rating\nann,pie,3\n");
        assertEquals(0, run("--ratings", full.toString(), "--mode", "replace", "--quiet"));
        assertTrue(out.toString().contains(full + ": 1 rows read, 1 ratings written, 1 not in the file deleted"), out.toString());
        assertEquals(List.of("ann,pie,3"), Tables.ratings(db));
    }

    @Test
    void an_unknown_mode_is_a_usage_error() {
        assertEquals(2, run("--trust", "t.csv", "--mode", "merge"));
        assertTrue(err.toString().contains("mode 'merge' is not one of append, replace"), err.toString());
    }
}
