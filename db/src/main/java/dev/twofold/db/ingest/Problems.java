package dev.twofold.db.ingest;

import dev.twofold.db.BadInputException;
import java.util.ArrayList;
import java.util.List;

/** Problems found while checking input: the first {@link BadInputException#MAX_LISTED} kept, all counted. */
final class Problems {

    private final List<String> listed = new ArrayList<>();
    private long total;

    void add(String where, String reason) {
        total++;
        if (listed.size() < BadInputException.MAX_LISTED) {
            listed.add(where + ": " + reason);
        }
    }

    boolean any() {
        return total > 0;
    }

    long total() {
        return total;
    }

    BadInputException refuse(String what) {
        return new BadInputException(what + " refused: " + total + (total == 1 ? " problem" : " problems")
                + ", nothing was written", listed, total);
    }
}
