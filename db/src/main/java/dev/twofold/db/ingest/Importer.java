package dev.twofold.db.ingest;

import dev.twofold.db.connect.Database;
import java.nio.file.Path;

/**
 * Loads a ratings CSV and/or a trust CSV in one transaction: stream-parse and validate every row,
 * COPY into staging tables, map ids to dense indices, merge (a later rating of the same user and
 * item replaces the earlier). Any invalid row refuses everything with {@code FILE:LINE: reason}
 * lines and nothing is written.
 */
public final class Importer {

    public Importer(Database database, RatingScale scale) {
    }

    /**
     * @param ratings ratings CSV ({@code user,item,rating[,time]}) or null
     * @param trust   trust CSV ({@code truster,trustee[,weight]}) or null
     * @throws dev.twofold.db.BadInputException when any row is invalid; nothing is written
     */
    public ImportReport importFiles(Path ratings, Path trust) {
        throw new UnsupportedOperationException("db helper implements this");
    }
}
