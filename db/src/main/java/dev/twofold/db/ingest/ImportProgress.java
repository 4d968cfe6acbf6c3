package dev.twofold.db.ingest;

import dev.twofold.db.progress.Progress;

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

    /**
     * Shows each phase as an amount task of {@code progress}: a bar with the time left on a terminal;
     * in a log, a line once a phase has run {@link Progress#LOG_INTERVAL_MS} ms, then at most one per
     * interval, and one at its end — short imports log nothing.
     */
    static ImportProgress showing(Progress progress) {
        return new ImportProgress() {
            private Progress.Task phase;

            @Override
            public void start(String name, long total) {
                phase = progress.startAmount(name, total);
            }

            @Override
            public void advance(long done) {
                if (phase != null) {
                    phase.advance(done, "");
                }
            }

            @Override
            public void finish(String detail) {
                if (phase != null) {
                    phase.finish(detail);
                    phase = null;
                }
            }
        };
    }

    /** A phase begins; {@code total} is its size in its own unit (bytes of a file, rows to write). */
    void start(String phase, long total);

    /** {@code done} of the phase's total are done. */
    void advance(long done);

    /** The phase ended; {@code detail} (may be empty) says what it did. */
    void finish(String detail);
}
