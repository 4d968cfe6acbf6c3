package dev.twofold.db.ingest;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.StringWriter;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import net.jqwik.api.Arbitraries;
import net.jqwik.api.Arbitrary;
import net.jqwik.api.ForAll;
import net.jqwik.api.Property;
import net.jqwik.api.Provide;
import org.apache.commons.csv.CSVFormat;
import org.apache.commons.csv.CSVPrinter;

/**
 * The CSV reader against an outside reference: whatever records Apache Commons CSV writes in the
 * RFC 4180 format (any text in the fields: commas, quotes, line breaks of every kind, non-ASCII,
 * NUL), with CRLF or LF record ends and with or without a byte-order mark, the reader returns the
 * same records, each with the physical line it starts on, and no problem.
 */
class CsvRecordsPropertiesTest {

    /** Characters that make CSV hard, and some ordinary ones. */
    private static final String NASTY = ",\"\r\n \t;'\\ab1é中\u0000\uFEFF";

    @Property(tries = 500, seed = "20261201")
    void records_written_by_the_reference_writer_read_back_identically(@ForAll("records") List<List<String>> records,
            @ForAll boolean crlf, @ForAll boolean byteOrderMark) throws IOException {
        byte[] file = write(records, crlf, byteOrderMark);
        List<List<String>> read = new ArrayList<>();
        List<Long> lines = new ArrayList<>();
        try (CsvRecords csv = new CsvRecords(new ByteArrayInputStream(file))) {
            while (csv.next()) {
                assertNull(csv.problem(), () -> "problem at line " + csv.line() + ": " + csv.problem());
                List<String> fields = new ArrayList<>();
                for (int i = 0; i < csv.fieldCount(); i++) {
                    fields.add(csv.field(i));
                }
                read.add(fields);
                lines.add(csv.line());
            }
        }
        assertEquals(records, read);
        assertEquals(expectedLines(records), lines);
    }

    @Property(tries = 300, seed = "20261201")
    void a_byte_that_is_not_utf_8_is_reported_on_its_record_and_the_rest_still_read(@ForAll("records") List<List<String>> records,
            @ForAll("badBytes") byte bad) throws IOException {
        List<List<String>> withMarker = new ArrayList<>(records);
        int target = records.size() / 2;
        List<String> row = new ArrayList<>(records.get(target));
        row.set(0, row.get(0) + "\u0001MARK\u0001");
        withMarker.set(target, row);
        byte[] file = replaceMarker(write(withMarker, false, false), bad);
        List<Long> problemLines = new ArrayList<>();
        int count = 0;
        try (CsvRecords csv = new CsvRecords(new ByteArrayInputStream(file))) {
            while (csv.next()) {
                count++;
                if (csv.problem() != null) {
                    assertTrue(csv.problem().contains("UTF-8"), csv.problem());
                    problemLines.add(csv.line());
                }
            }
        }
        assertEquals(List.of(expectedLines(records).get(target)), problemLines, "one problem, on the record's first line");
        assertEquals(records.size(), count, "every record still read");
    }

    @Provide
    Arbitrary<List<List<String>>> records() {
        Arbitrary<String> field = Arbitraries.oneOf(
                Arbitraries.strings().withChars(NASTY).ofMaxLength(12),
                Arbitraries.strings().all().ofMaxLength(8).filter(CsvRecordsPropertiesTest::encodable),
                Arbitraries.strings().alpha().ofMaxLength(6));
        return field.list().ofMinSize(1).ofMaxSize(5).list().ofMinSize(1).ofMaxSize(12)
                .filter(rs -> !rs.get(0).get(0).startsWith("\uFEFF")); // a mark at the very start is the file's, by design
    }

    @Provide
    Arbitrary<Byte> badBytes() {
        // 0x80..0xBF continue a sequence that never started; 0xC0, 0xC1, 0xF5..0xFF never occur in UTF-8 (RFC 3629, §3)
        return Arbitraries.oneOf(Arbitraries.bytes().between((byte) 0x80, (byte) 0xBF),
                Arbitraries.of((byte) 0xC0, (byte) 0xC1, (byte) 0xF5, (byte) 0xFE, (byte) 0xFF));
    }

    static byte[] write(List<List<String>> records, boolean crlf, boolean byteOrderMark) throws IOException {
        StringWriter text = new StringWriter();
        CSVFormat format = CSVFormat.RFC4180.builder().setRecordSeparator(crlf ? "\r\n" : "\n").get();
        try (CSVPrinter printer = new CSVPrinter(text, format)) {
            for (List<String> r : records) {
                printer.printRecord(r);
            }
        }
        ByteArrayOutputStream out = new ByteArrayOutputStream();
        if (byteOrderMark) {
            out.write(new byte[] {(byte) 0xEF, (byte) 0xBB, (byte) 0xBF});
        }
        out.write(text.toString().getBytes(StandardCharsets.UTF_8));
        return out.toByteArray();
    }

    /** Line on which each record starts: one more than the line ends (LF, CRLF, lone CR) before it. */
    static List<Long> expectedLines(List<List<String>> records) {
        List<Long> lines = new ArrayList<>();
        long line = 1;
        for (List<String> r : records) {
            lines.add(line);
            for (String f : r) {
                line += lineEnds(f);
            }
            line++;
        }
        return lines;
    }

    private static long lineEnds(String s) {
        long n = 0;
        for (int i = 0; i < s.length(); i++) {
            char c = s.charAt(i);
            if (c == '\n' || (c == '\r' && (i + 1 == s.length() || s.charAt(i + 1) != '\n'))) {
                n++;
            }
        }
        return n;
    }

    private static boolean encodable(String s) {
        return s.equals(new String(s.getBytes(StandardCharsets.UTF_8), StandardCharsets.UTF_8));
    }

    private static byte[] replaceMarker(byte[] file, byte bad) {
        byte[] marker = "\u0001MARK\u0001".getBytes(StandardCharsets.UTF_8);
        for (int i = 0; i + marker.length <= file.length; i++) {
            boolean match = true;
            for (int j = 0; j < marker.length && match; j++) {
                match = file[i + j] == marker[j];
            }
            if (match) {
                ByteArrayOutputStream out = new ByteArrayOutputStream();
                out.write(file, 0, i);
                out.write(bad);
                out.write(file, i + marker.length, file.length - i - marker.length);
                return out.toByteArray();
            }
        }
        assertFalse(true, "marker not found");
        return file;
    }
}
