package dev.twofold.db.ingest;

import java.nio.charset.StandardCharsets;
import java.sql.SQLException;
import java.util.Arrays;
import org.postgresql.copy.CopyIn;

/**
 * Rows in PostgreSQL's COPY text format (tab-separated, {@code \N} for null, backslash escapes),
 * buffered and streamed into a {@link CopyIn} in large chunks.
 */
final class CopyText {

    private static final int FLUSH_BYTES = 1 << 16;

    private final CopyIn copy;
    private byte[] buf = new byte[FLUSH_BYTES + 1024];
    private int length;
    private long rows;

    CopyText(CopyIn copy) {
        this.copy = copy;
    }

    CopyText text(String s) {
        ensure(s.length() * 2 + 1);
        for (int i = 0; i < s.length(); i++) {
            char c = s.charAt(i);
            if (c >= 0x80) {
                return utf8(s);
            }
        }
        for (int i = 0; i < s.length(); i++) {
            char c = s.charAt(i);
            switch (c) {
                case '\\' -> {
                    buf[length++] = '\\';
                    buf[length++] = '\\';
                }
                case '\t' -> {
                    buf[length++] = '\\';
                    buf[length++] = 't';
                }
                case '\n' -> {
                    buf[length++] = '\\';
                    buf[length++] = 'n';
                }
                case '\r' -> {
                    buf[length++] = '\\';
                    buf[length++] = 'r';
                }
                default -> buf[length++] = (byte) c;
            }
        }
        return this;
    }

    private CopyText utf8(String s) {
        byte[] bytes = s.getBytes(StandardCharsets.UTF_8);
        ensure(bytes.length * 2 + 1);
        for (byte b : bytes) {
            switch (b) {
                case '\\' -> {
                    buf[length++] = '\\';
                    buf[length++] = '\\';
                }
                case '\t' -> {
                    buf[length++] = '\\';
                    buf[length++] = 't';
                }
                case '\n' -> {
                    buf[length++] = '\\';
                    buf[length++] = 'n';
                }
                case '\r' -> {
                    buf[length++] = '\\';
                    buf[length++] = 'r';
                }
                default -> buf[length++] = b;
            }
        }
        return this;
    }

    CopyText number(long v) {
        ascii(Long.toString(v));
        return this;
    }

    CopyText number(float v) {
        ascii(Float.toString(v));
        return this;
    }

    CopyText nullValue() {
        ensure(2);
        buf[length++] = '\\';
        buf[length++] = 'N';
        return this;
    }

    CopyText tab() {
        ensure(1);
        buf[length++] = '\t';
        return this;
    }

    /** Ends a row; sends the buffer when it is full. */
    void endRow() throws SQLException {
        ensure(1);
        buf[length++] = '\n';
        rows++;
        if (length >= FLUSH_BYTES) {
            flush();
        }
    }

    long rows() {
        return rows;
    }

    /** Sends what is buffered and ends the COPY; returns the rows the server took. */
    long finish() throws SQLException {
        flush();
        return copy.endCopy();
    }

    void cancel() throws SQLException {
        if (copy.isActive()) {
            copy.cancelCopy();
        }
    }

    private void flush() throws SQLException {
        if (length > 0) {
            copy.writeToCopy(buf, 0, length);
            length = 0;
        }
    }

    private void ascii(String s) {
        ensure(s.length());
        for (int i = 0; i < s.length(); i++) {
            buf[length++] = (byte) s.charAt(i);
        }
    }

    private void ensure(int more) {
        if (length + more > buf.length) {
            buf = Arrays.copyOf(buf, Math.max(buf.length * 2, length + more));
        }
    }
}
