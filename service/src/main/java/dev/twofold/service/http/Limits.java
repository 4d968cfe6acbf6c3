package dev.twofold.service.http;

/** The request limits of the HTTP contract. */
public final class Limits {

    /** Items per recommendation list when {@code count} is absent. */
    public static final int DEFAULT_COUNT = 10;
    public static final int MIN_COUNT = 1;
    public static final int MAX_COUNT = 1000;
    /** Ids are 1..128 characters (Unicode code points). */
    public static final int MIN_ID_CHARS = 1;
    public static final int MAX_ID_CHARS = 128;
    /** Largest request body: 1 MiB. */
    public static final int MAX_BODY_BYTES = 1 << 20;
    /** Most rows (pairs) in one request. */
    public static final int MAX_BATCH_ROWS = 10_000;

    private Limits() {
    }
}
