package dev.twofold.db.ingest;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.BadInputException;
import dev.twofold.db.TwofoldException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import java.io.ByteArrayInputStream;
import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.PreparedStatement;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.stream.Stream;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.DynamicTest;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.TestFactory;
import org.junit.jupiter.api.io.TempDir;

/**
 * The corpus {@code hostile-rows.csv}: files with a byte-order mark, CRLF and lone CR line ends,
 * quoted commas and embedded quotes, empty lines, a 200 kB line, bytes that are not UTF-8, NUL
 * bytes, SQL-looking, path-traversal and spreadsheet-formula ids. Each is imported into a real
 * PostgreSQL on top of stored data: either every row lands and every id is stored exactly as
 * written, or the file is refused with exit 65 and a {@code FILE:LINE: reason} per bad row, and
 * every table (counted and summed by SQL) is as it was.
 */
class HostileRowsTest {

    static final String CORPUS = "hostile-rows.csv";
    private static final byte[] MARKER = "####\t".getBytes(StandardCharsets.US_ASCII);

    static Database db;

    @TempDir
    static Path dir;

    @BeforeAll
    static void open() {
        db = TestDatabases.fresh();
    }

    @AfterAll
    static void close() {
        db.close();
    }

    /** One case of the corpus: its name, file kind, verdict and the file's bytes. */
    record Case(String name, String kind, String verdict, byte[] content) {
    }

    @TestFactory
    Stream<DynamicTest> every_hostile_file_is_stored_exactly_or_refused_whole_with_its_lines() throws IOException {
        return cases().stream().map(c -> DynamicTest.dynamicTest(c.name(), () -> check(c)));
    }

    @Test
    void the_corpus_has_the_hostile_bytes_it_claims() throws IOException {
        List<Case> cases = cases();
        assertEquals(27, cases.size());
        byte[] all = corpus();
        assertTrue(contains(all, new byte[] {(byte) 0xEF, (byte) 0xBB, (byte) 0xBF}), "a byte-order mark");
        assertTrue(contains(all, new byte[] {0}), "a NUL byte");
        assertTrue(contains(all, new byte[] {'f', (byte) 0xE9, ','}), "a Latin-1 byte that is not UTF-8");
        assertTrue(contains(all, "\r\n".getBytes(StandardCharsets.US_ASCII)), "CRLF");
        assertTrue(cases.stream().anyMatch(c -> c.content().length > 200_000), "a line over 200 kB");
    }

    private void check(Case c) throws Exception {
        Tables.clear(db);
        new Importer(db, RatingScale.DEFAULT).importFiles(
                Files.writeString(dir.resolve("stored-ratings.csv"), "user,item,rating\nstored-cook,stored-recipe,4\n"),
                Files.writeString(dir.resolve("stored-trust.csv"), "truster,trustee\nstored-cook,ana\n"));
        String before = Tables.checksum(db);
        long ratingsBefore = Tables.ratings(db).size();
        long trustBefore = Tables.trust(db).size();
        Path file = Files.write(dir.resolve(c.name() + ".csv"), c.content());
        boolean ratings = c.kind().equals("ratings");
        Importer importer = new Importer(db, RatingScale.DEFAULT);

        if (c.verdict().startsWith("accept ")) {
            int rows = Integer.parseInt(c.verdict().substring("accept ".length()));
            ImportReport report = ratings ? importer.importFiles(file, null) : importer.importFiles(null, file);
            assertEquals(rows, ratings ? report.ratingsWritten() : report.trustWritten());
            assertEquals(ratingsBefore + (ratings ? rows : 0), Tables.ratings(db).size());
            assertEquals(trustBefore + (ratings ? 0 : rows), Tables.trust(db).size());
            for (String[] ids : idsOf(c.content())) {
                assertTrue(stored("users", ids[0]), () -> "id '" + ids[0] + "' not stored as written");
                assertTrue(stored(ratings ? "items" : "users", ids[1]), () -> "id '" + ids[1] + "' not stored as written");
            }
            return;
        }
        List<String> expected = Arrays.asList(c.verdict().substring("refuse ".length()).split("\\|"));
        BadInputException refused = assertThrows(BadInputException.class,
                () -> { if (ratings) { importer.importFiles(file, null); } else { importer.importFiles(null, file); } });
        assertEquals(TwofoldException.EXIT_DATA_ERROR, refused.exitCode());
        assertEquals(expected.size(), refused.totalProblems(), refused.report());
        for (int i = 0; i < expected.size(); i++) {
            String[] lineAndWords = expected.get(i).split(":", 2);
            String problem = refused.problems().get(i);
            assertTrue(problem.startsWith(file + ":" + lineAndWords[0] + ": "), "expected line " + lineAndWords[0] + ": " + problem);
            assertTrue(problem.contains(lineAndWords[1]), "expected '" + lineAndWords[1] + "': " + problem);
            assertFalse(problem.indexOf('\u0000') >= 0 || problem.indexOf('\n') >= 0, "the reason is one printable line: " + problem);
        }
        assertTrue(refused.getMessage().contains("nothing was written"), refused.getMessage());
        assertEquals(before, Tables.checksum(db), "a refused file changes no table");
    }

    /** The (first, second) ids of every record after the header, as the reader sees them. */
    private static List<String[]> idsOf(byte[] content) throws IOException {
        List<String[]> ids = new ArrayList<>();
        try (CsvRecords csv = new CsvRecords(new ByteArrayInputStream(content))) {
            boolean header = true;
            while (csv.next()) {
                if (!header) {
                    ids.add(new String[] {csv.field(0), csv.field(1)});
                }
                header = false;
            }
        }
        return ids;
    }

    private static boolean stored(String table, String id) throws SQLException {
        try (Connection c = db.dataSource().getConnection();
             PreparedStatement ps = c.prepareStatement("select count(*) from " + table + " where external_id = ?")) {
            ps.setString(1, id);
            try (ResultSet rs = ps.executeQuery()) {
                rs.next();
                return rs.getLong(1) == 1;
            }
        }
    }

    static List<Case> cases() throws IOException {
        byte[] all = corpus();
        List<Integer> starts = new ArrayList<>();
        for (int i = 0; i + MARKER.length <= all.length; i++) {
            if ((i == 0 || all[i - 1] == '\n') && Arrays.equals(all, i, i + MARKER.length, MARKER, 0, MARKER.length)) {
                starts.add(i);
            }
        }
        List<Case> cases = new ArrayList<>();
        for (int k = 0; k < starts.size(); k++) {
            int start = starts.get(k);
            int lineEnd = indexOf(all, (byte) '\n', start);
            String[] marker = new String(all, start, lineEnd - start, StandardCharsets.UTF_8).split("\t");
            int end = (k + 1 < starts.size() ? starts.get(k + 1) : all.length) - 1; // the LF that ends the case is not in it
            cases.add(new Case(marker[1], marker[2], marker[3], Arrays.copyOfRange(all, lineEnd + 1, end)));
        }
        return cases;
    }

    private static byte[] corpus() throws IOException {
        try (InputStream in = HostileRowsTest.class.getResourceAsStream(CORPUS)) {
            if (in == null) {
                throw new IOException(CORPUS + " is missing from the test resources");
            }
            return in.readAllBytes();
        }
    }

    private static int indexOf(byte[] data, byte b, int from) {
        for (int i = from; i < data.length; i++) {
            if (data[i] == b) {
                return i;
            }
        }
        return -1;
    }

    private static boolean contains(byte[] data, byte[] part) {
        for (int i = 0; i + part.length <= data.length; i++) {
            if (Arrays.equals(data, i, i + part.length, part, 0, part.length)) {
                return true;
            }
        }
        return false;
    }
}
