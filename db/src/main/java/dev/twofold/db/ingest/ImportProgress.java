package dev.twofold.db.ingest;

/**
 * Told how far an import has come, phase by phase: reading each file (in bytes), then writing each
 * kind of row (in rows). Called on the importing thread.
 */
public interface ImportProgress {

    /** Shows nothing. */
    ImportProgress NONE = new ImportProgress() {
        @Override
        public void start(String phase, long total) {
        }

        @Override
        public void advance(long done) {
        }

        @Override
        public void finish(String detail) {
        }
    };

    /** A phase begins; {@code total} is its size in its own unit (bytes of a file, rows to write). */
    void start(String phase, long total);

    /** {@code done} of the phase's total are done. */
    void advance(long done);

    /** The phase ended; {@code detail} (may be empty) says what it did. */
    void finish(String detail);
}
