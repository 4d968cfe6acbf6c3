package dev.twofold.db.ingest;

import java.util.Locale;

/** How an import meets what is already stored ({@code twofold import --mode}). */
public enum ImportMode {
    /**
     * Merge: new pairs are added, stored pairs take the file's value by the importer's rule (see
     * {@link Importer}), pairs not in the file stay. Re-importing the same file changes nothing.
     */
    APPEND,
    /**
     * Swap: for each kind of data a file is given for (ratings, trust), the stored rows become exactly
     * the file's rows — pairs not in the file are deleted, stored values are overwritten whatever
     * their times — in the same single transaction as everything else, so readers see the old data
     * set or the new one, never a mix. Data of a kind no file is given for is left as it is. User
     * and item ids stay known (their indices are never reused).
     */
    REPLACE;

    public String label() {
        return name().toLowerCase(Locale.ROOT);
    }

    /** @throws IllegalArgumentException naming the allowed values */
    public static ImportMode parse(String text) {
        for (ImportMode m : values()) {
            if (m.label().equals(text)) {
                return m;
            }
        }
        throw new IllegalArgumentException("mode '" + text + "' is not one of append, replace");
    }
}
