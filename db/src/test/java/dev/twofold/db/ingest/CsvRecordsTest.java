package dev.twofold.db.ingest;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

class CsvRecordsTest {

    /** Each record as "line:field|field|..." (or "line!problem"). */
    static List<String> read(String text) throws IOException {
        List<String> out = new ArrayList<>();
        try (CsvRecords csv = new CsvRecords(new ByteArrayInputStream(text.getBytes(StandardCharsets.UTF_8)))) {
            while (csv.next()) {
                if (csv.problem() != null) {
                    out.add(csv.line() + "!" + csv.problem());
                    continue;
                }
                StringBuilder b = new StringBuilder().append(csv.line()).append(':');
                for (int i = 0; i < csv.fieldCount(); i++) {
                    b.append(i == 0 ? "" : "|").append(csv.field(i));
                }
                out.add(b.toString());
            }
        }
        return out;
    }

    @Test
    void lf_crlf_and_lone_cr_all_end_lines() throws IOException {
        assertEquals(List.of("1:a|b", "2:c|d", "3:e|f", "4:g|h"), read("a,b\nc,d\r\ne,f\rg,h"));
    }

    @Test
    void empty_fields_and_a_missing_final_newline_are_kept() throws IOException {
        assertEquals(List.of("1:a||", "2:|b|"), read("a,,\n,b,"));
    }

    @Test
    void blank_lines_are_skipped_but_a_quoted_empty_field_is_a_record() throws IOException {
        assertEquals(List.of("1:a", "4:", "5:b"), read("a\n\n\r\n\"\"\nb\n"));
    }

    @Test
    void a_byte_order_mark_is_dropped_only_at_the_start() throws IOException {
        assertEquals(List.of("1:user", "2:\uFEFFx"), read("\uFEFFuser\n\uFEFFx\n"));
    }

    @Test
    void quoted_fields_hold_commas_quotes_and_line_breaks() throws IOException {
        assertEquals(List.of("1:a,b|say \"hi\"|x\r\ny", "3:next"), read("\"a,b\",\"say \"\"hi\"\"\",\"x\r\ny\"\nnext\n"));
    }

    @Test
    void an_unclosed_quote_ends_the_file_with_a_problem() throws IOException {
        assertEquals(List.of("1:ok", "2!a quoted field starting on line 2 is never closed"), read("ok\n\"open,\nmore\nlines\n"));
    }

    @Test
    void a_huge_field_is_refused_instead_of_filling_memory() throws IOException {
        String huge = "\"" + "x".repeat(CsvRecords.MAX_FIELD_BYTES + 10) + "\"\n";
        List<String> records = read(huge);
        assertEquals(1, records.size());
        assertTrue(records.get(0).startsWith("1!a field is longer than"), records.get(0));
    }

    @Test
    void an_empty_input_has_no_records() throws IOException {
        assertEquals(List.of(), read(""));
        try (CsvRecords csv = new CsvRecords(new ByteArrayInputStream(new byte[0]))) {
            assertFalse(csv.next());
            assertNull(csv.problem());
        }
    }
}
