package dev.twofold.db.ingest;

import java.io.IOException;
import java.io.InputStream;
import java.nio.ByteBuffer;
import java.nio.CharBuffer;
import java.nio.charset.CharacterCodingException;
import java.nio.charset.CharsetDecoder;
import java.nio.charset.CodingErrorAction;
import java.nio.charset.StandardCharsets;
import java.util.Arrays;

/**
 * A streaming reader of comma-separated records (RFC 4180) in UTF-8, working on bytes: quoted
 * fields with doubled quotes and embedded commas or line breaks, LF, CRLF or CR line ends, a
 * leading byte-order mark. Completely empty lines are skipped. A record that breaks the syntax is
 * still returned, with {@link #problem()} saying what is wrong, so a caller can report every bad
 * row in one pass; only an unterminated quote (or a field longer than {@value #MAX_FIELD_BYTES}
 * bytes) ends the file early, since nothing after it can be trusted.
 *
 * <p>{@link #line()} is the physical line on which the current record starts (the header is line 1).
 */
final class CsvRecords implements AutoCloseable {

    static final int MAX_FIELD_BYTES = 1 << 16;
    private static final int BUFFER_BYTES = 1 << 16;
    private static final int EOF = -1;

    private final InputStream in;
    private final byte[] buf = new byte[BUFFER_BYTES];
    private int pos;
    private int limit;
    private boolean atStart = true;

    private byte[] field = new byte[256];
    private int fieldLength;
    private boolean fieldQuoted;
    private String[] fields = new String[8];
    private int fieldCount;

    private long physicalLine = 1;
    private long recordLine;
    private String problem;
    private boolean stopped;
    private final CharsetDecoder strictUtf8 = StandardCharsets.UTF_8.newDecoder()
            .onMalformedInput(CodingErrorAction.REPORT).onUnmappableCharacter(CodingErrorAction.REPORT);

    CsvRecords(InputStream in) {
        this.in = in;
    }

    /** Advances to the next record; false at the end of the input (or after a problem that ends it). */
    boolean next() throws IOException {
        while (!stopped) {
            if (atStart) {
                skipByteOrderMark();
            }
            if (peek() == EOF) {
                return false;
            }
            recordLine = physicalLine;
            fieldCount = 0;
            problem = null;
            readRecord();
            boolean blank = fieldCount == 1 && fields[0].isEmpty() && !fieldQuoted && problem == null;
            if (!blank) {
                return true;
            }
        }
        return false;
    }

    long line() {
        return recordLine;
    }

    int fieldCount() {
        return fieldCount;
    }

    String field(int i) {
        return fields[i];
    }

    /** What is syntactically wrong with the current record, or null. */
    String problem() {
        return problem;
    }

    /** The current record as it would be written back, for header messages. */
    String joined() {
        return String.join(",", Arrays.copyOf(fields, fieldCount));
    }

    @Override
    public void close() throws IOException {
        in.close();
    }

    private void readRecord() throws IOException {
        while (true) {
            fieldLength = 0;
            fieldQuoted = false;
            int end = peek() == '"' ? readQuoted() : readUnquoted();
            endField();
            if (end != ',') {
                return;
            }
        }
    }

    /** Reads an unquoted field; returns what ended it: ',', '\n' (any line end) or EOF. */
    private int readUnquoted() throws IOException {
        while (true) {
            int b = read();
            switch (b) {
                case ',':
                    return ',';
                case '\n':
                    physicalLine++;
                    return '\n';
                case '\r':
                    if (peek() == '\n') {
                        read();
                    }
                    physicalLine++;
                    return '\n';
                case EOF:
                    return EOF;
                case '"':
                    note("a quote inside an unquoted field; quote the whole field and double inner quotes");
                    append(b);
                    break;
                default:
                    append(b);
            }
            if (stopped) {
                return EOF;
            }
        }
    }

    private int readQuoted() throws IOException {
        read(); // opening quote
        fieldQuoted = true;
        long startLine = physicalLine;
        while (true) {
            int b = read();
            if (b == EOF) {
                note("a quoted field starting on line " + startLine + " is never closed");
                stopped = true;
                return EOF;
            }
            if (b == '"') {
                if (peek() == '"') {
                    read();
                    append('"');
                    continue;
                }
                int after = peek();
                if (after == ',' || after == '\n' || after == '\r' || after == EOF) {
                    return readUnquoted(); // consumes just the separator or line end
                }
                note("characters after the closing quote of a field");
                return readUnquoted();
            }
            if (b == '\n' || (b == '\r' && peek() != '\n')) {
                physicalLine++; // line ends inside a quoted field count as outside: LF, CRLF (at its LF) or a lone CR
            }
            append(b);
            if (stopped) {
                return EOF;
            }
        }
    }

    private void append(int b) {
        if (fieldLength == field.length) {
            if (fieldLength >= MAX_FIELD_BYTES) {
                note("a field is longer than " + MAX_FIELD_BYTES + " bytes (an unbalanced quote?)");
                stopped = true;
                return;
            }
            field = Arrays.copyOf(field, field.length * 2);
        }
        field[fieldLength++] = (byte) b;
    }

    private void endField() {
        if (fieldCount == fields.length) {
            fields = Arrays.copyOf(fields, fields.length * 2);
        }
        fields[fieldCount++] = decode();
    }

    private String decode() {
        boolean ascii = true;
        for (int i = 0; i < fieldLength; i++) {
            if (field[i] < 0) {
                ascii = false;
                break;
            }
        }
        if (ascii) {
            return new String(field, 0, fieldLength, StandardCharsets.ISO_8859_1);
        }
        try {
            CharBuffer chars = strictUtf8.reset().decode(ByteBuffer.wrap(field, 0, fieldLength));
            return chars.toString();
        } catch (CharacterCodingException e) {
            note("not valid UTF-8 text; save the file as UTF-8");
            return new String(field, 0, fieldLength, StandardCharsets.UTF_8);
        }
    }

    private void note(String what) {
        if (problem == null) {
            problem = what;
        }
    }

    private void skipByteOrderMark() throws IOException {
        atStart = false;
        if (fill(3) && (buf[pos] & 0xff) == 0xEF && (buf[pos + 1] & 0xff) == 0xBB && (buf[pos + 2] & 0xff) == 0xBF) {
            pos += 3;
        }
    }

    private int read() throws IOException {
        if (pos == limit && !fill(1)) {
            return EOF;
        }
        return buf[pos++] & 0xff;
    }

    private int peek() throws IOException {
        if (pos == limit && !fill(1)) {
            return EOF;
        }
        return buf[pos] & 0xff;
    }

    /** Makes at least {@code n} bytes available if the input has them. */
    private boolean fill(int n) throws IOException {
        if (limit - pos >= n) {
            return true;
        }
        System.arraycopy(buf, pos, buf, 0, limit - pos);
        limit -= pos;
        pos = 0;
        while (limit < n) {
            int r = in.read(buf, limit, buf.length - limit);
            if (r < 0) {
                return false;
            }
            limit += r;
        }
        return true;
    }
}
