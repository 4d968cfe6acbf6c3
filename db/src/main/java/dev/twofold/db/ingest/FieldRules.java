package dev.twofold.db.ingest;

import java.time.DateTimeException;
import java.time.Instant;
import java.time.OffsetDateTime;
import java.time.format.DateTimeFormatter;
import java.time.format.DateTimeParseException;

/**
 * The rules every incoming row obeys, shared by file imports and API batches. Each check either
 * returns the parsed value or throws {@link Refused} whose message is the reason a person reads
 * after {@code FILE:LINE: } or {@code [index]: }.
 *
 * <ul>
 *   <li>ids: 1..{@value #MAX_ID_CHARS} characters (Unicode code points), no leading or trailing
 *       whitespace (so {@code "ann"} and {@code "ann "} can never become two users by accident), no
 *       control characters, no half of a surrogate pair (text that has no UTF-8 form);</li>
 *   <li>rating: a plain decimal number ({@code 4}, {@code 3.5}, {@code 4e0}; not {@code NaN},
 *       {@code Infinity} or hex), finite as a float32, inside the scale;</li>
 *   <li>time: empty (unknown), epoch seconds (optionally with up to 6 decimals), or ISO-8601 with
 *       {@code Z} or an offset; years 1..9999;</li>
 *   <li>weight: empty (1) or a plain decimal number in (0, 1].</li>
 * </ul>
 */
public final class FieldRules {

    public static final int MAX_ID_CHARS = 128;
    /** Most characters of a client's value quoted in a message. */
    public static final int QUOTED_CHARS = 40;
    /** A time that is absent, in the micro-second representation of {@link #timeMicros}. */
    public static final long NO_TIME = Long.MIN_VALUE;
    /** 0001-01-01T00:00:00Z and 9999-12-31T23:59:59Z in epoch seconds. */
    static final long MIN_EPOCH_SECONDS = -62_135_596_800L;
    static final long MAX_EPOCH_SECONDS = 253_402_300_799L;

    private FieldRules() {
    }

    /** A row value is refused; the message is the reason. Cheap: no stack trace. */
    public static final class Refused extends Exception {
        public Refused(String reason) {
            super(reason, null, false, false);
        }
    }

    public static void id(String label, String value) throws Refused {
        if (value == null || value.isEmpty()) {
            throw new Refused(label + " is empty");
        }
        int chars = value.codePointCount(0, value.length());
        if (chars > MAX_ID_CHARS) {
            throw new Refused(label + " is " + chars + " characters long; ids are 1.." + MAX_ID_CHARS + " characters");
        }
        if (Character.isWhitespace(value.codePointAt(0)) || Character.isWhitespace(value.codePointBefore(value.length()))
                || Character.isSpaceChar(value.codePointAt(0)) || Character.isSpaceChar(value.codePointBefore(value.length()))) {
            throw new Refused(label + " '" + value + "' has leading or trailing whitespace; remove it");
        }
        for (int i = 0; i < value.length(); i++) {
            char c = value.charAt(i);
            if (Character.isISOControl(c)) {
                throw new Refused(label + " '" + printable(value) + "' contains a control character (U+"
                        + String.format("%04X", (int) c) + ")");
            }
            if (Character.isHighSurrogate(c) && i + 1 < value.length() && Character.isLowSurrogate(value.charAt(i + 1))) {
                i++; // a pair: one character outside the Basic Multilingual Plane
            } else if (Character.isSurrogate(c)) {
                // JSON can escape half a pair ("\ud800"); stored as UTF-8 it would turn into '?' and
                // become another id, so it is refused rather than mangled.
                throw new Refused(label + " '" + printable(value) + "' is not valid Unicode text: it has half of a"
                        + " surrogate pair (U+" + String.format("%04X", (int) c) + ") at character "
                        + (value.codePointCount(0, i) + 1));
            }
        }
    }

    /** The rating as stored (float32), checked against the scale. */
    public static float rating(String text, RatingScale scale) throws Refused {
        float value = number("rating", text);
        if (!scale.contains(value)) {
            throw new Refused("rating " + text + " is outside the scale " + scale + "; fix the row or set --scale");
        }
        return value;
    }

    public static float rating(double value, RatingScale scale) throws Refused {
        float f = (float) value;
        if (!Double.isFinite(value) || !Float.isFinite(f)) {
            throw new Refused("rating " + value + " is not a finite number");
        }
        if (!scale.contains(f)) {
            throw new Refused("rating " + value + " is outside the scale " + scale);
        }
        return f;
    }

    /** The trust weight; an empty field means 1. */
    public static float weight(String text) throws Refused {
        if (text == null || text.isEmpty()) {
            return 1f;
        }
        float w = number("weight", text);
        return checkWeight(w, text);
    }

    public static float weight(double value) throws Refused {
        if (!Double.isFinite(value)) {
            throw new Refused("weight " + value + " is not a finite number");
        }
        return checkWeight((float) value, Double.toString(value));
    }

    private static float checkWeight(float w, String shown) throws Refused {
        if (!(w > 0f && w <= 1f)) {
            throw new Refused("weight " + shown + " is outside (0,1]; use 1 for full trust");
        }
        return w;
    }

    public static void notSelfTrust(String truster, String trustee) throws Refused {
        if (truster.equals(trustee)) {
            throw new Refused("truster and trustee are both '" + truster + "'; self-trust is not allowed");
        }
    }

    /** Micro-seconds since the epoch, or {@link #NO_TIME} for an empty field. */
    public static long timeMicros(String text) throws Refused {
        if (text == null || text.isEmpty()) {
            return NO_TIME;
        }
        Instant t = text.indexOf('-', 1) > 0 || text.indexOf(':') >= 0 ? iso(text) : epoch(text);
        if (t.getEpochSecond() < MIN_EPOCH_SECONDS || t.getEpochSecond() > MAX_EPOCH_SECONDS) {
            throw new Refused("time " + text + " is outside the years 1..9999");
        }
        return micros(t);
    }

    /** Micro-seconds since the epoch of an instant (null means {@link #NO_TIME}). */
    public static long timeMicros(Instant t) throws Refused {
        if (t == null) {
            return NO_TIME;
        }
        if (t.getEpochSecond() < MIN_EPOCH_SECONDS || t.getEpochSecond() > MAX_EPOCH_SECONDS) {
            throw new Refused("time " + t + " is outside the years 1..9999");
        }
        return micros(t);
    }

    /** Parses a time as the files and API accept it: epoch seconds or ISO-8601 with an offset; null when empty. */
    public static Instant parseTime(String text) throws Refused {
        long us = timeMicros(text);
        return us == NO_TIME ? null : Instant.ofEpochSecond(Math.floorDiv(us, 1_000_000L), Math.floorMod(us, 1_000_000L) * 1_000L);
    }

    private static long micros(Instant t) {
        return t.getEpochSecond() * 1_000_000L + t.getNano() / 1_000;
    }

    private static Instant epoch(String text) throws Refused {
        int i = 0;
        int n = text.length();
        if (i < n && (text.charAt(i) == '-' || text.charAt(i) == '+')) {
            i++;
        }
        int intStart = i;
        while (i < n && isDigit(text.charAt(i))) {
            i++;
        }
        int intDigits = i - intStart;
        int fracDigits = 0;
        boolean point = i < n && text.charAt(i) == '.';
        if (point) {
            i++;
            int fracStart = i;
            while (i < n && isDigit(text.charAt(i))) {
                i++;
            }
            fracDigits = i - fracStart;
        }
        if (i != n || intDigits == 0 || fracDigits > 6) {
            throw new Refused("time " + text + " is neither epoch seconds nor ISO-8601 with an offset (like 2024-05-01T18:30:00Z)");
        }
        if (intDigits > 12) {
            throw new Refused("time " + text + " is too large for epoch seconds (milliseconds?); use seconds or ISO-8601");
        }
        if (!point) {
            return Instant.ofEpochSecond(Long.parseLong(text)); // whole seconds, the common case: no decimal arithmetic
        }
        java.math.BigDecimal seconds = new java.math.BigDecimal(text);
        long whole = seconds.setScale(0, java.math.RoundingMode.FLOOR).longValueExact();
        long nanos = seconds.subtract(java.math.BigDecimal.valueOf(whole)).movePointRight(9).longValue();
        return Instant.ofEpochSecond(whole, nanos);
    }

    private static Instant iso(String text) throws Refused {
        try {
            return OffsetDateTime.parse(text, DateTimeFormatter.ISO_OFFSET_DATE_TIME).toInstant();
        } catch (DateTimeParseException e) {
            if (parses(text, DateTimeFormatter.ISO_LOCAL_DATE_TIME)) {
                throw new Refused("time " + text + " has no UTC offset; add Z or an offset like +02:00");
            }
            if (parses(text, DateTimeFormatter.ISO_LOCAL_DATE)) {
                throw new Refused("time " + text + " has no time of day; write it like " + text + "T00:00:00Z");
            }
            throw new Refused("time " + text + " is neither epoch seconds nor ISO-8601 with an offset (like 2024-05-01T18:30:00Z)");
        }
    }

    private static boolean parses(String text, DateTimeFormatter format) {
        try {
            format.parse(text);
            return true;
        } catch (DateTimeException e) {
            return false;
        }
    }

    private static float number(String label, String text) throws Refused {
        if (!isPlainDecimal(text)) {
            throw new Refused(label + " '" + printable(text) + "' is not a number");
        }
        float value = Float.parseFloat(text);
        if (!Float.isFinite(value)) {
            throw new Refused(label + " " + text + " is not a finite number");
        }
        return value;
    }

    /** {@code [+-]? (digits [. digits?] | . digits) ([eE] [+-]? digits)?} */
    static boolean isPlainDecimal(String s) {
        int n = s.length();
        int i = 0;
        if (i < n && (s.charAt(i) == '+' || s.charAt(i) == '-')) {
            i++;
        }
        int digits = 0;
        while (i < n && isDigit(s.charAt(i))) {
            i++;
            digits++;
        }
        if (i < n && s.charAt(i) == '.') {
            i++;
            while (i < n && isDigit(s.charAt(i))) {
                i++;
                digits++;
            }
        }
        if (digits == 0) {
            return false;
        }
        if (i < n && (s.charAt(i) == 'e' || s.charAt(i) == 'E')) {
            i++;
            if (i < n && (s.charAt(i) == '+' || s.charAt(i) == '-')) {
                i++;
            }
            int exp = 0;
            while (i < n && isDigit(s.charAt(i))) {
                i++;
                exp++;
            }
            if (exp == 0) {
                return false;
            }
        }
        return i == n;
    }

    private static boolean isDigit(char c) {
        return c >= '0' && c <= '9';
    }

    /**
     * A client's value as it may be quoted in a message: at most {@value #QUOTED_CHARS} characters
     * (cut between characters, never inside a surrogate pair) then "...", with control characters
     * and half surrogate pairs shown as '?', so the message itself is plain, valid text.
     */
    public static String printable(String s) {
        StringBuilder out = new StringBuilder(Math.min(s.length(), QUOTED_CHARS + 4));
        int shown = 0;
        int i = 0;
        for (; i < s.length() && shown < QUOTED_CHARS; shown++) {
            int cp = s.codePointAt(i);
            int width = Character.charCount(cp);
            out.appendCodePoint(Character.isISOControl(cp) || Character.isSurrogate((char) cp) && width == 1 ? '?' : cp);
            i += width;
        }
        return i < s.length() ? out.append("...").toString() : out.toString();
    }
}
