package dev.twofold.db.ingest;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.time.Instant;
import org.junit.jupiter.api.Test;

class FieldRulesTest {

    @Test
    void epoch_seconds_and_iso_times_mean_the_same_instant() throws FieldRules.Refused {
        // 1714588200 s after 1970-01-01T00:00:00Z is 2024-05-01T18:30:00Z (as `date -u -d @1714588200` prints).
        long expected = 1_714_588_200_000_000L;
        assertEquals(expected, FieldRules.timeMicros("1714588200"));
        assertEquals(expected, FieldRules.timeMicros("2024-05-01T18:30:00Z"));
        assertEquals(expected, FieldRules.timeMicros("2024-05-01T20:30:00+02:00"));
        assertEquals(expected + 250_000, FieldRules.timeMicros("1714588200.25"));
        assertEquals(expected + 123_456, FieldRules.timeMicros("2024-05-01T18:30:00.123456Z"));
        assertEquals(-1_000_000L, FieldRules.timeMicros("-1"));
        assertEquals(expected, FieldRules.timeMicros("+1714588200"));
        assertEquals(expected, FieldRules.timeMicros("1714588200."));
        assertEquals(-1_500_000L, FieldRules.timeMicros("-1.5"));
        assertEquals(FieldRules.NO_TIME, FieldRules.timeMicros(""));
        assertEquals(Instant.parse("2024-05-01T18:30:00Z"), FieldRules.parseTime("1714588200"));
    }

    @Test
    void epoch_seconds_with_more_than_microsecond_digits_are_refused() {
        FieldRules.Refused e = assertThrows(FieldRules.Refused.class, () -> FieldRules.timeMicros("1714588200.1234567"));
        assertTrue(e.getMessage().startsWith("time 1714588200.1234567 is neither"), e.getMessage());
    }

    @Test
    void only_plain_decimal_numbers_count_as_numbers() {
        for (String ok : new String[] {"4", "-4", "+4", "3.5", ".5", "5.", "4e0", "4E+1", "1.5e-3"}) {
            assertTrue(FieldRules.isPlainDecimal(ok), ok);
        }
        for (String bad : new String[] {"", "+", ".", "e5", "4e", "4f", "4d", "0x10", "NaN", "Infinity", " 4", "4 ", "1,5", "--4"}) {
            assertFalse(FieldRules.isPlainDecimal(bad), bad);
        }
    }

    @Test
    void ids_are_counted_in_characters_not_bytes_or_utf16_units() throws FieldRules.Refused {
        FieldRules.id("user", "🍲".repeat(128)); // 128 characters, 256 UTF-16 units, 512 bytes
        FieldRules.Refused e = assertThrows(FieldRules.Refused.class, () -> FieldRules.id("user", "🍲".repeat(129)));
        assertEquals("user is 129 characters long; ids are 1..128 characters", e.getMessage());
    }

    @Test
    void half_a_surrogate_pair_is_refused_because_utf_8_would_turn_it_into_another_id() throws FieldRules.Refused {
        // Java's UTF-8 encoder (and so PgJDBC) writes an unpaired surrogate as '?': "a\uD800" would be stored as "a?".
        assertEquals("a?", new String("a\uD800".getBytes(java.nio.charset.StandardCharsets.UTF_8),
                java.nio.charset.StandardCharsets.UTF_8));
        for (String bad : new String[] {"a\uD800", "\uDC00b", "a\uDC00\uD800b", "x\uD83C"}) {
            FieldRules.Refused e = assertThrows(FieldRules.Refused.class, () -> FieldRules.id("user", bad), bad);
            assertTrue(e.getMessage().contains("surrogate") && e.getMessage().startsWith("user '"), e.getMessage());
            assertFalse(hasUnpairedSurrogate(e.getMessage()), "the message itself is valid text: " + e.getMessage());
        }
        FieldRules.id("user", "\uD83C\uDF72 soup"); // a whole pair is one character (U+1F372)
    }

    @Test
    void quoted_values_are_cut_between_characters_and_show_control_characters_as_question_marks() {
        String pairs = "\uD83C\uDF72".repeat(FieldRules.QUOTED_CHARS + 5);
        String shown = FieldRules.printable(pairs);
        assertEquals("\uD83C\uDF72".repeat(FieldRules.QUOTED_CHARS) + "...", shown);
        assertEquals("a?b?c", FieldRules.printable("a\u0000b\nc"));
        assertEquals("a?", FieldRules.printable("a\uDC00"));
        assertEquals("x".repeat(FieldRules.QUOTED_CHARS), FieldRules.printable("x".repeat(FieldRules.QUOTED_CHARS)));
    }

    static boolean hasUnpairedSurrogate(String s) {
        for (int i = 0; i < s.length(); i++) {
            char c = s.charAt(i);
            if (Character.isHighSurrogate(c) && i + 1 < s.length() && Character.isLowSurrogate(s.charAt(i + 1))) {
                i++;
            } else if (Character.isSurrogate(c)) {
                return true;
            }
        }
        return false;
    }

    @Test
    void a_no_break_space_at_the_edge_counts_as_whitespace() {
        assertThrows(FieldRules.Refused.class, () -> FieldRules.id("item", "pie\u00a0"));
    }

    @Test
    void the_rating_is_checked_as_the_float_it_will_be_stored_as() throws FieldRules.Refused {
        assertEquals(5f, FieldRules.rating("5.00000001", RatingScale.DEFAULT), "rounds to 5.0f, inside the scale");
        assertThrows(FieldRules.Refused.class, () -> FieldRules.rating("5.0001", RatingScale.DEFAULT));
    }
}
