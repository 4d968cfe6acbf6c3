package dev.twofold.db.snapshot;

import dev.twofold.db.connect.Database;

/** Reads all ratings and trust edges in one REPEATABLE READ transaction, as primitive arrays. */
public final class SnapshotReader {

    public SnapshotReader(Database database) {
    }

    public Snapshot read() {
        throw new UnsupportedOperationException("db helper implements this");
    }
}
