package dev.twofold.db.internal;

import java.sql.SQLException;
import java.util.Arrays;
import org.postgresql.copy.CopyIn;

/**
 * Rows in PostgreSQL's binary COPY format, buffered and streamed into a {@link CopyIn}. Numbers are
 * big-endian as the format requires; {@link #bytea(float[], int, int)} writes float32 values
 * little-endian, the layout of Twofold's factor blobs. Call {@link #row(int)} before the fields of
 * each row and {@link #finish()} once at the end.
 */
public final class BinaryCopyWriter {

    /** Micro-seconds between 1970-01-01 and PostgreSQL's epoch 2000-01-01. */
    public static final long PG_EPOCH_OFFSET_MICROS = 946_684_800_000_000L;
    private static final byte[] SIGNATURE = {'P', 'G', 'C', 'O', 'P', 'Y', '\n', (byte) 0xFF, '\r', '\n', 0};
    private static final int FLUSH_BYTES = 1 << 17;

    private final CopyIn copy;
    private byte[] buf = new byte[FLUSH_BYTES + 4096];
    private int length;
    private long rows;

    public BinaryCopyWriter(CopyIn copy) {
        this.copy = copy;
        System.arraycopy(SIGNATURE, 0, buf, 0, SIGNATURE.length);
        length = SIGNATURE.length;
        putInt(0); // flags
        putInt(0); // header extension length
    }

    public BinaryCopyWriter row(int fields) throws SQLException {
        if (length >= FLUSH_BYTES) {
            flush();
        }
        ensure(2);
        buf[length++] = (byte) (fields >>> 8);
        buf[length++] = (byte) fields;
        rows++;
        return this;
    }

    public BinaryCopyWriter int4(int v) {
        ensure(8);
        putInt(4);
        putInt(v);
        return this;
    }

    public BinaryCopyWriter int8(long v) {
        ensure(12);
        putInt(8);
        putLong(v);
        return this;
    }

    public BinaryCopyWriter float4(float v) {
        return int4Raw(Float.floatToRawIntBits(v));
    }

    private BinaryCopyWriter int4Raw(int bits) {
        ensure(8);
        putInt(4);
        putInt(bits);
        return this;
    }

    /** A {@code timestamptz} from micro-seconds since 1970-01-01 UTC. */
    public BinaryCopyWriter timestamptz(long epochMicros) {
        return int8(epochMicros - PG_EPOCH_OFFSET_MICROS);
    }

    public BinaryCopyWriter nullValue() {
        ensure(4);
        putInt(-1);
        return this;
    }

    /** A {@code bytea} of {@code count} float32 values from {@code values[offset..]}, little-endian. */
    public BinaryCopyWriter bytea(float[] values, int offset, int count) {
        ensure(4 + 4 * count);
        putInt(4 * count);
        for (int i = 0; i < count; i++) {
            int bits = Float.floatToRawIntBits(values[offset + i]);
            buf[length++] = (byte) bits;
            buf[length++] = (byte) (bits >>> 8);
            buf[length++] = (byte) (bits >>> 16);
            buf[length++] = (byte) (bits >>> 24);
        }
        return this;
    }

    public long rows() {
        return rows;
    }

    /** Writes the trailer, sends everything and ends the COPY; returns the rows the server took. */
    public long finish() throws SQLException {
        ensure(2);
        buf[length++] = (byte) 0xFF;
        buf[length++] = (byte) 0xFF;
        flush();
        return copy.endCopy();
    }

    /** Abandons the COPY (the statement fails, and with it the transaction). */
    public void cancel() throws SQLException {
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

    private void putInt(int v) {
        buf[length++] = (byte) (v >>> 24);
        buf[length++] = (byte) (v >>> 16);
        buf[length++] = (byte) (v >>> 8);
        buf[length++] = (byte) v;
    }

    private void putLong(long v) {
        putInt((int) (v >>> 32));
        putInt((int) v);
    }

    private void ensure(int more) {
        if (length + more > buf.length) {
            buf = Arrays.copyOf(buf, Math.max(buf.length * 2, length + more));
        }
    }
}
