package dev.twofold.db.ingest;

import java.time.Duration;

/** What an import did: rows read from each file, rows that changed the tables, new ids, time taken. */
public record ImportReport(
        long ratingsRead,
        long ratingsWritten,
        long trustRead,
        long trustWritten,
        long newUsers,
        long newItems,
        Duration took) {
}
