package dev.twofold.db.internal;

import java.io.EOFException;
import java.io.IOException;
import java.io.InputStream;
import java.sql.SQLException;
import org.postgresql.copy.CopyManager;
import org.postgresql.copy.PGCopyInputStream;

/**
 * Reads the rows of {@code COPY (query) TO STDOUT (FORMAT binary)} field by field, without
 * materialising a result set: the fastest way to pull millions of rows into primitive arrays.
 * Call {@link #nextRow()} until it returns false, then read that row's fields in order.
 */
public final class BinaryCopyReader implements AutoCloseable {

    private static final int HEADER_BYTES = 11 + 4; // signature, flags (extension length read separately)

    private final InputStream in;
    private final byte[] buf = new byte[1 << 16];
    private int pos;
    private int limit;

    private BinaryCopyReader(InputStream in) {
        this.in = in;
    }

    /** Starts {@code COPY (query) TO STDOUT (FORMAT binary)}; the query must not take parameters. */
    public static BinaryCopyReader open(CopyManager copy, String query) throws SQLException, IOException {
        BinaryCopyReader r = new BinaryCopyReader(new PGCopyInputStream(copy.copyOut("copy (" + query + ") to stdout (format binary)")));
        r.skip(HEADER_BYTES);
        r.skip(r.rawInt()); // header extension
        return r;
    }

    /** Moves to the next row; false after the last one. */
    public boolean nextRow() throws IOException {
        if (!fill(2)) {
            return false;
        }
        short fields = (short) (((buf[pos] & 0xff) << 8) | (buf[pos + 1] & 0xff));
        pos += 2;
        return fields != -1;
    }

    public int int4() throws IOException {
        expectLength(4);
        return rawInt();
    }

    public long int8() throws IOException {
        expectLength(8);
        return ((long) rawInt() << 32) | (rawInt() & 0xffffffffL);
    }

    public float float4() throws IOException {
        return Float.intBitsToFloat(int4());
    }

    /** A nullable {@code timestamptz} as micro-seconds since 1970-01-01 UTC, or {@code ifNull}. */
    public long timestamptzOr(long ifNull) throws IOException {
        int len = rawInt();
        if (len < 0) {
            return ifNull;
        }
        if (len != 8) {
            throw new IOException("expected an 8-byte timestamptz, got " + len + " bytes");
        }
        return (((long) rawInt() << 32) | (rawInt() & 0xffffffffL)) + BinaryCopyWriter.PG_EPOCH_OFFSET_MICROS;
    }

    /** A {@code bytea} of little-endian float32 values into {@code out[offset..offset+count)}; its length must be 4·count. */
    public void float32s(float[] out, int offset, int count) throws IOException {
        int len = rawInt();
        if (len != 4 * count) {
            throw new IOException("expected " + (4 * count) + " bytes of float32 values, got " + len);
        }
        for (int i = 0; i < count; i++) {
            if (!fill(4)) {
                throw new EOFException();
            }
            int bits = (buf[pos] & 0xff) | (buf[pos + 1] & 0xff) << 8 | (buf[pos + 2] & 0xff) << 16 | (buf[pos + 3] & 0xff) << 24;
            pos += 4;
            out[offset + i] = Float.intBitsToFloat(bits);
        }
    }

    /** A nullable text value. */
    public String text() throws IOException {
        int len = rawInt();
        if (len < 0) {
            return null;
        }
        byte[] bytes = new byte[len];
        int done = 0;
        while (done < len) {
            if (!fill(1)) {
                throw new EOFException();
            }
            int n = Math.min(len - done, limit - pos);
            System.arraycopy(buf, pos, bytes, done, n);
            pos += n;
            done += n;
        }
        return new String(bytes, java.nio.charset.StandardCharsets.UTF_8);
    }

    @Override
    public void close() throws IOException {
        // Drain so the connection is usable again (closing the stream ends the COPY).
        while (in.read(buf) >= 0) {
            // discard
        }
        in.close();
    }

    private void expectLength(int n) throws IOException {
        int len = rawInt();
        if (len != n) {
            throw new IOException(len < 0 ? "unexpected null" : "expected a " + n + "-byte field, got " + len);
        }
    }

    private int rawInt() throws IOException {
        if (!fill(4)) {
            throw new EOFException();
        }
        int v = (buf[pos] & 0xff) << 24 | (buf[pos + 1] & 0xff) << 16 | (buf[pos + 2] & 0xff) << 8 | (buf[pos + 3] & 0xff);
        pos += 4;
        return v;
    }

    private void skip(int n) throws IOException {
        while (n > 0) {
            if (!fill(1)) {
                throw new EOFException();
            }
            int k = Math.min(n, limit - pos);
            pos += k;
            n -= k;
        }
    }

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
