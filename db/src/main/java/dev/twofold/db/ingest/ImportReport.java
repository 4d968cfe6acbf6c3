package dev.twofold.db.ingest;

import java.time.Duration;

/**
 * What an import did: rows read from each file, rows that changed the tables (inserted or updated),
 * new ids, time taken, and — for {@link ImportMode#REPLACE} — stored rows deleted because the file
 * no longer has them.
 */
public record ImportReport(
        long ratingsRead,
        long ratingsWritten,
        long trustRead,
        long trustWritten,
        long newUsers,
        long newItems,
        Duration took,
        ImportMode mode,
        long ratingsDeleted,
        long trustDeleted) {
}
