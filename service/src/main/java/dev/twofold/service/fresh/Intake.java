package dev.twofold.service.fresh;

import dev.twofold.db.TwofoldException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.ingest.RatingInput;
import dev.twofold.db.ingest.RatingScale;
import dev.twofold.db.ingest.RatingWriter;
import dev.twofold.db.ingest.TrustInput;
import dev.twofold.db.ingest.WriteReport;
import dev.twofold.db.snapshot.HistoryReader;
import java.util.ArrayList;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Set;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Takes ratings and trust edges from the API: writes them through {@link RatingWriter} (checked,
 * one transaction, committed before returning; a refused batch writes nothing), then re-reads the
 * current history of every user whose own data changed (the raters; the trusters) and folds them
 * into the live model, so their next recommendations reflect the write.
 *
 * <p>Ratings are checked against the scale of the model being served (1..5 before any model).
 */
public final class Intake {

    private static final Logger LOG = LoggerFactory.getLogger(Intake.class);

    private final Database database;
    private final LiveModels live;

    public Intake(Database database, LiveModels live) {
        this.database = database;
        this.live = live;
    }

    /** The scale ratings must lie in: the served model's, else {@link RatingScale#DEFAULT}. */
    public RatingScale scale() {
        return live.model().map(m -> new RatingScale(m.scaleMin(), m.scaleMax())).orElse(RatingScale.DEFAULT);
    }

    /** @throws dev.twofold.db.BadInputException when any row is invalid; nothing is written */
    public Accepted ratings(List<RatingInput> rows) {
        WriteReport report = new RatingWriter(database, scale()).upsertRatings(rows);
        Set<String> users = new LinkedHashSet<>();
        for (RatingInput row : rows) {
            users.add(row.user());
        }
        return new Accepted(report, refresh(users, report.received()));
    }

    /** @throws dev.twofold.db.BadInputException when any row is invalid; nothing is written */
    public Accepted trust(List<TrustInput> rows) {
        WriteReport report = new RatingWriter(database, scale()).upsertTrust(rows);
        Set<String> trusters = new LinkedHashSet<>();
        for (TrustInput row : rows) {
            trusters.add(row.truster());
        }
        return new Accepted(report, refresh(trusters, report.received()));
    }

    /** Re-reads and folds in; after a committed write a failure here is logged, not thrown. */
    private int refresh(Set<String> users, int rows) {
        List<String> all = new ArrayList<>(users);
        int folded = 0;
        try {
            HistoryReader reader = new HistoryReader(database);
            for (int from = 0; from < all.size(); from += HistoryReader.MAX_USERS_PER_READ) {
                List<String> chunk = all.subList(from, Math.min(all.size(), from + HistoryReader.MAX_USERS_PER_READ));
                folded += live.foldIn(reader.read(chunk));
            }
        } catch (TwofoldException | IllegalArgumentException e) {
            LOG.warn("{} rows were committed, but folding their {} users in failed ({}); they are served as the"
                    + " model knows them until the next model load", rows, all.size(), e.getMessage());
        }
        return folded;
    }
}
