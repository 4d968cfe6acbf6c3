package dev.twofold.db.ingest;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.BadInputException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Statement;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.TreeSet;
import net.jqwik.api.Arbitraries;
import net.jqwik.api.Arbitrary;
import net.jqwik.api.Combinators;
import net.jqwik.api.ForAll;
import net.jqwik.api.Property;
import net.jqwik.api.Provide;
import net.jqwik.api.lifecycle.AfterContainer;
import net.jqwik.api.lifecycle.BeforeContainer;
import net.jqwik.api.lifecycle.BeforeTry;

/**
 * The importer on a real PostgreSQL, over random files: any valid ratings file (ids full of
 * commas, quotes, backslashes, SQL and non-ASCII; ratings in every accepted spelling; CRLF or LF;
 * blank lines; a byte-order mark) lands exactly; any one mutation of one row refuses the whole
 * file with one problem that names the file, the row's line and the field, and leaves every table
 * as it was.
 */
class ImporterPropertiesTest {

    private static final String SEED = "20261201";
    /** What the stored data is before each try: one rating, which a refused import must leave alone. */
    private static final String BASELINE = "user,item,rating\nbaseline-cook,baseline-recipe,3\n";

    private static Database db;
    private static Path dir;

    @BeforeContainer
    static void open() throws IOException {
        db = TestDatabases.fresh();
        dir = Files.createTempDirectory("twofold-import-properties-");
    }

    @AfterContainer
    static void close() throws IOException {
        db.close();
        try (var files = Files.list(dir)) {
            for (Path p : files.toList()) {
                Files.delete(p);
            }
        }
        Files.delete(dir);
    }

    @BeforeTry
    void baseline() throws SQLException, IOException {
        Tables.clear(db);
        new Importer(db, RatingScale.DEFAULT).importFiles(Files.writeString(dir.resolve("baseline.csv"), BASELINE), null);
    }

    /** One row of a ratings file: the fields as written (already checked valid) and what they mean. */
    record Row(String user, String item, String ratingText, float rating, String time, Long epochSeconds) {
    }

    @Property(tries = 40, seed = SEED)
    void any_valid_ratings_file_lands_exactly(@ForAll("rowLists") List<Row> rows, @ForAll boolean crlf,
            @ForAll boolean byteOrderMark, @ForAll boolean blankLines) throws Exception {
        Path file = dir.resolve("valid.csv");
        Files.write(file, write(rows, crlf, byteOrderMark, blankLines, -1, null).bytes());
        ImportReport report = new Importer(db, RatingScale.DEFAULT).importFiles(file, null);

        Map<String, String> expected = new LinkedHashMap<>();
        expected.put("baseline-cook\u0000baseline-recipe", "3.0|");
        for (Row r : rows) {
            expected.put(r.user() + '\u0000' + r.item(), r.rating() + "|" + (r.epochSeconds() == null ? "" : r.epochSeconds()));
        }
        assertEquals(rows.size(), report.ratingsWritten(), "every row written once");
        assertEquals(new TreeSet<>(expected.entrySet().stream().map(e -> e.getKey() + "=" + e.getValue()).toList()), stored());
    }

    @Property(tries = 60, seed = SEED)
    void any_one_mutation_refuses_the_file_naming_its_line_and_field_and_writes_nothing(@ForAll("rowLists") List<Row> rows,
            @ForAll boolean crlf, @ForAll boolean blankLines, @ForAll("mutations") Mutation mutation,
            @ForAll("positions") int position) throws Exception {
        String before = Tables.checksum(db);
        int target = position % rows.size();
        Written written = write(rows, crlf, false, blankLines, target, mutation);
        Path file = dir.resolve("mutated.csv");
        Files.write(file, written.bytes());

        BadInputException refused = assertThrows(BadInputException.class,
                () -> new Importer(db, RatingScale.DEFAULT).importFiles(file, null));
        assertEquals(1, refused.totalProblems(), refused.report());
        String problem = refused.problems().get(0);
        String where = file + ":" + written.lines().get(target) + ": ";
        assertTrue(problem.startsWith(where), "expected " + where + "... for " + mutation + ", got " + problem);
        assertTrue(problem.contains(mutation.says()), "expected '" + mutation.says() + "' for " + mutation + ": " + problem);
        assertTrue(refused.getMessage().contains("nothing was written"), refused.getMessage());
        assertEquals(before, Tables.checksum(db), "a refused import changes nothing");
    }

    /** A change to one field (or the row) of a valid file, and the words the problem must contain. */
    record Mutation(String name, int field, byte[] replacement, String says) {
        static Mutation of(String name, int field, String replacement, String says) {
            return new Mutation(name, field, replacement.getBytes(StandardCharsets.UTF_8), says);
        }

        @Override
        public String toString() {
            return name;
        }
    }

    @Provide
    Arbitrary<Mutation> mutations() {
        return Arbitraries.of(
                Mutation.of("rating above the scale", 2, "7", "outside the scale"),
                Mutation.of("rating below the scale", 2, "0.5", "outside the scale"),
                Mutation.of("rating NaN", 2, "NaN", "rating 'NaN' is not a number"),
                Mutation.of("rating Infinity", 2, "Infinity", "rating 'Infinity' is not a number"),
                Mutation.of("rating beyond float32", 2, "1e39", "rating 1e39 is not a finite number"),
                Mutation.of("rating hex", 2, "0x4", "is not a number"),
                Mutation.of("rating with a decimal comma", 2, "\"4,5\"", "is not a number"),
                Mutation.of("rating empty", 2, "", "rating '' is not a number"),
                Mutation.of("user empty", 0, "", "user is empty"),
                Mutation.of("item too long", 1, "x".repeat(129), "item is 129 characters long"),
                Mutation.of("user with a leading space", 0, " ana", "has leading or trailing whitespace"),
                Mutation.of("item with a NUL byte", 1, "so\u0000up", "control character (U+0000)"),
                Mutation.of("item with a line break", 1, "\"so\nup\"", "control character (U+000A)"),
                new Mutation("user not UTF-8", 0, new byte[] {'c', 'a', 'f', (byte) 0xE9}, "not valid UTF-8"),
                new Mutation("item cut inside a character", 1, new byte[] {'p', (byte) 0xE4, (byte) 0xB8}, "not valid UTF-8"),
                Mutation.of("quote inside an unquoted field", 0, "an\"a", "a quote inside an unquoted field"),
                Mutation.of("text after a closing quote", 1, "\"soup\"x", "characters after the closing quote"),
                Mutation.of("a quote never closed", 1, "\"soup", "never closed"),
                Mutation.of("an extra field", 2, "4,5", "5 fields, expected 4"),
                Mutation.of("a missing field", -1, "ana,soup", "2 fields, expected 4"),
                Mutation.of("time in words", 3, "yesterday", "time yesterday is neither"),
                Mutation.of("time without offset", 3, "2024-05-01T18:30:00", "has no UTC offset"),
                Mutation.of("time in milliseconds", 3, "1714588200000", "too large for epoch seconds"));
    }

    @Provide
    Arbitrary<Integer> positions() {
        return Arbitraries.integers().between(0, 1_000);
    }

    @Provide
    Arbitrary<List<Row>> rowLists() {
        Arbitrary<String> id = Arbitraries.oneOf(
                Arbitraries.strings().alpha().numeric().ofMinLength(1).ofMaxLength(10),
                Arbitraries.strings().withChars("ab,\"'\\;-%./é中N").ofMinLength(1).ofMaxLength(12).map(s -> "x" + s + "x"),
                Arbitraries.of("x'); drop table ratings; --", "../../etc/passwd", "\\N", "\\.", "a\\tb", "=cmd|' /C calc'!A0",
                        "\uD83C\uDF72", "crème brûlée", "\u202Eevil", "x".repeat(128)));
        Arbitrary<float[]> value = Arbitraries.of(1f, 1.5f, 2f, 3f, 3.25f, 4f, 4.5f, 5f).map(v -> new float[] {v});
        Arbitrary<Integer> spelling = Arbitraries.integers().between(0, 3);
        Arbitrary<Long> time = Arbitraries.oneOf(Arbitraries.just((Long) null), Arbitraries.longs().between(0, 4_000_000_000L));
        Arbitrary<Boolean> isoTime = Arbitraries.of(true, false);
        Arbitrary<Row> row = Combinators.combine(id, id, value, spelling, time, isoTime).as((u, i, v, sp, t, iso) -> {
            String text = switch (sp) {
                case 0 -> Float.toString(v[0]);                      // "4.0"
                case 1 -> new java.math.BigDecimal(Float.toString(v[0])).stripTrailingZeros().toPlainString(); // "4"
                case 2 -> "+" + v[0];                                  // "+4.0"
                default -> (v[0] / 10) + "e1";                        // "0.4e1"
            };
            String timeText = t == null ? "" : iso ? java.time.Instant.ofEpochSecond(t).toString() : Long.toString(t);
            return new Row(u, i, text, v[0], timeText, t);
        });
        return row.list().ofMinSize(1).ofMaxSize(25).uniqueElements(r -> r.user() + '\u0000' + r.item())
                .filter(rs -> rs.stream().noneMatch(r -> r.user().equals("baseline-cook")));
    }

    /** The file's bytes and the line each row starts on. */
    record Written(byte[] bytes, List<Long> lines) {
    }

    /** Writes a timed ratings file; row {@code target} (if any) gets {@code mutation}. Fields are quoted when they need it. */
    private static Written write(List<Row> rows, boolean crlf, boolean byteOrderMark, boolean blankLines, int target,
            Mutation mutation) {
        String end = crlf ? "\r\n" : "\n";
        ByteArrayOutputStream out = new ByteArrayOutputStream();
        if (byteOrderMark) {
            out.writeBytes(new byte[] {(byte) 0xEF, (byte) 0xBB, (byte) 0xBF});
        }
        out.writeBytes(("user,item,rating,time" + end).getBytes(StandardCharsets.UTF_8));
        long line = 2;
        List<Long> lines = new ArrayList<>();
        for (int r = 0; r < rows.size(); r++) {
            if (blankLines && r % 3 == 1) {
                out.writeBytes(end.getBytes(StandardCharsets.UTF_8));
                line++;
            }
            lines.add(line);
            Row row = rows.get(r);
            List<byte[]> fields = new ArrayList<>(List.of(csv(row.user()), csv(row.item()), csv(row.ratingText()), csv(row.time())));
            if (r == target) {
                if (mutation.field() < 0) {
                    fields = List.of(mutation.replacement());
                } else {
                    fields.set(mutation.field(), mutation.replacement());
                }
            }
            for (int f = 0; f < fields.size(); f++) {
                if (f > 0) {
                    out.write(',');
                }
                out.writeBytes(fields.get(f));
            }
            out.writeBytes(end.getBytes(StandardCharsets.UTF_8));
            line++;
            if (r == target && mutation.says().equals("never closed")) {
                break; // nothing after an unclosed quote can be read; the file ends with it
            }
        }
        return new Written(out.toByteArray(), lines);
    }

    private static byte[] csv(String field) {
        boolean quote = field.indexOf(',') >= 0 || field.indexOf('"') >= 0;
        String text = quote ? "\"" + field.replace("\"", "\"\"") + "\"" : field;
        return text.getBytes(StandardCharsets.UTF_8);
    }

    /** "user\0item=rating|epochSeconds" of every stored rating. */
    private static TreeSet<String> stored() throws SQLException {
        TreeSet<String> out = new TreeSet<>();
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement(); ResultSet rs = s.executeQuery(
                "select u.external_id, i.external_id, r.rating, extract(epoch from r.rated_at)::bigint from ratings r"
                        + " join users u on u.idx = r.user_idx join items i on i.idx = r.item_idx")) {
            while (rs.next()) {
                long t = rs.getLong(4);
                boolean noTime = rs.wasNull();
                out.add(rs.getString(1) + '\u0000' + rs.getString(2) + "=" + rs.getFloat(3) + "|" + (noTime ? "" : t));
            }
        }
        return out;
    }
}
