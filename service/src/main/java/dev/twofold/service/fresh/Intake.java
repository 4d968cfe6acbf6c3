package dev.twofold.service.fresh;

import dev.twofold.db.TwofoldException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.ingest.RatingInput;
import dev.twofold.db.ingest.RatingScale;
import dev.twofold.db.ingest.RatingWriter;
import dev.twofold.db.ingest.TrustInput;
import dev.twofold.db.ingest.WriteReport;
import dev.twofold.db.snapshot.HistoryReader;
import java.nio.charset.StandardCharsets;
import java.sql.Connection;
import java.sql.PreparedStatement;
import java.sql.SQLException;
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
 * into the live model, so their next recommendations reflect the write. Finally it announces the
 * users on {@value #WRITES_CHANNEL}, so other services on the same database fold them in too
 * ({@link #refresh(List)}).
 *
 * <p>Ratings are checked against the scale of the model being served (1..5 before any model).
 */
public final class Intake {

    /** NOTIFY channel of written users; payload: the writer's origin, then one user id per line. */
    public static final String WRITES_CHANNEL = "twofold_writes";
    /** PostgreSQL refuses NOTIFY payloads of 8000 bytes or more; ids are split to stay below. */
    static final int MAX_PAYLOAD_BYTES = 7_900;

    private static final Logger LOG = LoggerFactory.getLogger(Intake.class);

    private final Database database;
    private final LiveModels live;
    private final String origin;

    /**
     * @param origin identifies this service in its announcements, so it can ignore its own
     */
    public Intake(Database database, LiveModels live, String origin) {
        this.database = database;
        this.live = live;
        this.origin = origin;
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
        int folded = refresh(users, report.received() + " rows were committed");
        announce(users);
        return new Accepted(report, folded);
    }

    /** @throws dev.twofold.db.BadInputException when any row is invalid; nothing is written */
    public Accepted trust(List<TrustInput> rows) {
        WriteReport report = new RatingWriter(database, scale()).upsertTrust(rows);
        Set<String> trusters = new LinkedHashSet<>();
        for (TrustInput row : rows) {
            trusters.add(row.truster());
        }
        int folded = refresh(trusters, report.received() + " rows were committed");
        announce(trusters);
        return new Accepted(report, folded);
    }

    /**
     * Erases a user everywhere Twofold stores them ({@link RatingWriter#forgetUser}: ratings, trust
     * edges both ways, factors in every model version, the id; one transaction, committed and
     * announced before this returns), then drops them from this service's memory at once; other
     * services drop them when the announcement reaches them.
     *
     * @return false when no user has this id (nothing was stored, so nothing was erased)
     * @throws dev.twofold.db.BadInputException when the id breaks the id rules
     */
    public boolean forget(String user) {
        boolean erased = new RatingWriter(database, RatingScale.DEFAULT).forgetUser(user);
        live.forget(user);
        return erased;
    }

    /**
     * Folds in users another service announced (they wrote there); returns how many were folded.
     * Failures are logged: those users are served as before until the next model load.
     */
    public int refresh(List<String> users) {
        return refresh(new LinkedHashSet<>(users), "another service announced writes");
    }

    /**
     * The users of an announcement from another service, or empty when it is this service's own
     * (or not an announcement).
     */
    public List<String> announcedByOthers(String payload) {
        int newline = payload.indexOf('\n');
        if (newline < 0 || payload.substring(0, newline).equals(origin)) {
            return List.of();
        }
        return List.of(payload.substring(newline + 1).split("\n"));
    }

    /** NOTIFY the users in payloads below the size limit; a failure is logged (the write stands). */
    private void announce(Set<String> users) {
        List<String> payloads = new ArrayList<>();
        StringBuilder payload = new StringBuilder(origin);
        int bytes = origin.length();
        for (String user : users) {
            int size = user.getBytes(StandardCharsets.UTF_8).length + 1;
            if (bytes + size > MAX_PAYLOAD_BYTES) {
                payloads.add(payload.toString());
                payload = new StringBuilder(origin);
                bytes = origin.length();
            }
            payload.append('\n').append(user);
            bytes += size;
        }
        payloads.add(payload.toString());
        try (Connection c = database.dataSource().getConnection();
                PreparedStatement ps = c.prepareStatement("select pg_notify(?, ?)")) {
            c.setAutoCommit(true);
            for (String p : payloads) {
                ps.setString(1, WRITES_CHANNEL);
                ps.setString(2, p);
                ps.executeQuery().close();
            }
        } catch (SQLException e) {
            LOG.warn("could not tell other services about {} written users ({}); they see the data at their next"
                    + " model load", users.size(), e.getMessage());
        }
    }

    /** Re-reads and folds in; after a committed write a failure here is logged, not thrown. */
    private int refresh(Set<String> users, String context) {
        List<String> all = new ArrayList<>(users);
        int folded = 0;
        try {
            HistoryReader reader = new HistoryReader(database);
            for (int from = 0; from < all.size(); from += HistoryReader.MAX_USERS_PER_READ) {
                List<String> chunk = all.subList(from, Math.min(all.size(), from + HistoryReader.MAX_USERS_PER_READ));
                folded += live.foldIn(reader.read(chunk));
            }
        } catch (TwofoldException | IllegalArgumentException e) {
            LOG.warn("{}, but folding their {} users in failed ({}); they are served as the model knows them"
                    + " until the next model load", context, all.size(), e.getMessage());
        }
        return folded;
    }
}
