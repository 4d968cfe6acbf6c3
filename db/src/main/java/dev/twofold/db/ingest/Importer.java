package dev.twofold.db.ingest;

import dev.twofold.db.BadInputException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.internal.SqlFailures;
import java.io.BufferedInputStream;
import java.io.IOException;
import java.io.InputStream;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.SQLException;
import java.sql.Statement;
import java.time.Duration;
import java.util.List;
import org.postgresql.PGConnection;
import org.postgresql.copy.CopyManager;

/**
 * Loads a ratings CSV and/or a trust CSV in one transaction: stream-parse and validate every row,
 * COPY into staging tables, map ids to dense indices, merge. Any invalid row refuses everything
 * with {@code FILE:LINE: reason} lines and nothing is written.
 *
 * <h2>Files</h2>
 * Ratings: header {@code user,item,rating} or {@code user,item,rating,time}; trust: header
 * {@code truster,trustee} or {@code truster,trustee,weight}. Headers must match exactly. Field rules
 * are those of {@link FieldRules}; completely empty lines are skipped.
 *
 * <h2>Which rating wins</h2>
 * Rows are applied in file order, then against what is stored, with one rule: <em>an incoming
 * rating of a (user, item) replaces the current one unless both have a time and the incoming one
 * is older</em>. So without times the later line wins; with times the latest time wins (equal times:
 * the later line); a row without a time replaces whatever came before it. A re-import of the same
 * file changes nothing. Trust: the later line wins and replaces the stored weight.
 *
 * <h2>How</h2>
 * Parsing streams into {@code COPY ... FROM STDIN} of temporary tables while the server ingests, so
 * the file is read once and never held in memory; if any row is bad the COPY is cancelled and the
 * transaction rolled back, so the real tables are never touched. Valid files are merged with a few
 * set-based statements (new ids, then ratings, then trust) in the same transaction, ordered by index
 * so that concurrent imports lock rows in the same order.
 */
public final class Importer {

    /** Session memory for the staging tables and the merge sorts of one import. */
    static final String TEMP_BUFFERS = "256MB";
    static final String WORK_MEM = "256MB";

    private static final List<String> RATING_HEADER = List.of("user", "item", "rating");
    private static final List<String> RATING_HEADER_TIMED = List.of("user", "item", "rating", "time");
    private static final List<String> TRUST_HEADER = List.of("truster", "trustee");
    private static final List<String> TRUST_HEADER_WEIGHTED = List.of("truster", "trustee", "weight");

    private final Database database;
    private final RatingScale scale;

    public Importer(Database database, RatingScale scale) {
        this.database = database;
        this.scale = scale;
    }

    /**
     * @param ratings ratings CSV ({@code user,item,rating[,time]}) or null
     * @param trust   trust CSV ({@code truster,trustee[,weight]}) or null
     * @throws BadInputException when a file is missing or any row is invalid; nothing is written
     */
    public ImportReport importFiles(Path ratings, Path trust) {
        if (ratings == null && trust == null) {
            throw new IllegalArgumentException("give a ratings file, a trust file or both");
        }
        requireReadable(ratings);
        requireReadable(trust);
        long started = System.nanoTime();
        String what = (ratings != null ? ratings.toString() : "") + (ratings != null && trust != null ? " and " : "")
                + (trust != null ? trust.toString() : "");
        try (Connection c = database.dataSource().getConnection()) {
            try (Statement s = c.createStatement()) {
                s.execute("set temp_buffers = '" + TEMP_BUFFERS + "'"); // effective only before a session's first temp table
            }
            c.setAutoCommit(false);
            try {
                ImportReport report = load(c, ratings, trust, what, started);
                c.commit();
                return report;
            } catch (SQLException | IOException | RuntimeException e) {
                rollbackQuietly(c);
                throw e;
            }
        } catch (SQLException e) {
            throw SqlFailures.translate(e, "importing " + what, database.description());
        } catch (IOException e) {
            throw new BadInputException("cannot read " + what + ": " + e.getMessage());
        }
    }

    private ImportReport load(Connection c, Path ratings, Path trust, String what, long started) throws SQLException, IOException {
        try (Statement s = c.createStatement()) {
            s.execute("set local work_mem = '" + WORK_MEM + "'");
            s.execute("create temp table stage_ratings (line bigint not null, user_id text not null, item_id text not null,"
                    + " rating real not null, rated_us bigint) on commit drop");
            s.execute("create temp table stage_trust (line bigint not null, truster text not null, trustee text not null,"
                    + " weight real not null) on commit drop");
        }
        CopyManager copy = c.unwrap(PGConnection.class).getCopyAPI();
        Problems problems = new Problems();
        RatingsStaged staged = ratings == null ? new RatingsStaged(0, false, false) : stageRatings(copy, ratings, problems);
        long trustRead = trust == null ? 0 : stageTrust(copy, trust, problems);
        if (problems.any()) {
            throw problems.refuse(what);
        }
        try (Statement s = c.createStatement()) {
            s.execute("analyze stage_ratings");
            s.execute("analyze stage_trust");
            long newUsers = s.executeUpdate("""
                    insert into users (external_id)
                    select n.id from (select user_id as id from stage_ratings
                                      union select truster from stage_trust
                                      union select trustee from stage_trust) n
                    where not exists (select 1 from users u where u.external_id = n.id)
                    order by n.id
                    on conflict (external_id) do nothing""");
            long newItems = s.executeUpdate("""
                    insert into items (external_id)
                    select n.id from (select distinct item_id as id from stage_ratings) n
                    where not exists (select 1 from items i where i.external_id = n.id)
                    order by n.id
                    on conflict (external_id) do nothing""");
            long ratingsWritten = staged.rows() == 0 ? 0 : s.executeUpdate(mergeRatingsSql(staged));
            long trustWritten = trustRead == 0 ? 0 : s.executeUpdate("""
                    insert into trust (truster_idx, trustee_idx, weight)
                    select distinct on (a.idx, b.idx) a.idx, b.idx, t.weight
                    from stage_trust t
                    join users a on a.external_id = t.truster
                    join users b on b.external_id = t.trustee
                    order by a.idx, b.idx, t.line desc
                    on conflict (truster_idx, trustee_idx) do update
                       set weight = excluded.weight, updated_at = now()
                       where trust.weight is distinct from excluded.weight""");
            return new ImportReport(staged.rows(), ratingsWritten, trustRead, trustWritten, newUsers, newItems,
                    Duration.ofNanos(System.nanoTime() - started));
        }
    }

    /**
     * The merge of staged ratings. Within the file the winner of the sequential rule (see the class
     * comment) is: among the rows from the last untimed row on, the latest time, then the later
     * line. When the file has only timed or only untimed rows that is a plain ordering; the window
     * that finds the last untimed row is needed only for a mix.
     */
    static String mergeRatingsSql(RatingsStaged staged) {
        String source;
        if (staged.timed() && staged.untimed()) {
            source = """
                    (select m.* from (
                        select u.idx as user_idx, i.idx as item_idx, r.rating, r.rated_us, r.line,
                               max(r.line) filter (where r.rated_us is null) over (partition by u.idx, i.idx) as last_untimed
                        from stage_ratings r
                        join users u on u.external_id = r.user_id
                        join items i on i.external_id = r.item_id) m
                     where m.line >= coalesce(m.last_untimed, 0)) w""";
        } else {
            source = """
                    (select u.idx as user_idx, i.idx as item_idx, r.rating, r.rated_us, r.line
                     from stage_ratings r
                     join users u on u.external_id = r.user_id
                     join items i on i.external_id = r.item_id) w""";
        }
        return """
                insert into ratings (user_idx, item_idx, rating, rated_at)
                select distinct on (w.user_idx, w.item_idx) w.user_idx, w.item_idx, w.rating,
                       timestamptz 'epoch' + w.rated_us * interval '1 microsecond'
                from %s
                order by w.user_idx, w.item_idx, w.rated_us desc nulls last, w.line desc
                on conflict (user_idx, item_idx) do update
                   set rating = excluded.rating, rated_at = excluded.rated_at, updated_at = now()
                   where (ratings.rating, ratings.rated_at) is distinct from (excluded.rating, excluded.rated_at)
                     and not (ratings.rated_at is not null and excluded.rated_at is not null
                              and excluded.rated_at < ratings.rated_at)""".formatted(source);
    }

    record RatingsStaged(long rows, boolean timed, boolean untimed) {
    }

    private RatingsStaged stageRatings(CopyManager copy, Path file, Problems problems) throws SQLException, IOException {
        String name = file.toString();
        try (InputStream in = new BufferedInputStream(Files.newInputStream(file), 1 << 16);
             CsvRecords csv = new CsvRecords(in)) {
            int columns = header(csv, name, RATING_HEADER, RATING_HEADER_TIMED, problems);
            if (columns < 0) {
                return new RatingsStaged(0, false, false);
            }
            // A COPY only while every row so far is good: once one is bad the transaction is lost anyway.
            CopyText out = problems.any() ? null : new CopyText(copy.copyIn("copy stage_ratings (line, user_id, item_id, rating, rated_us) from stdin"));
            boolean timed = false;
            boolean untimed = false;
            long read = 0;
            try {
                while (csv.next()) {
                    read++;
                    long line = csv.line();
                    if (csv.problem() != null) {
                        problems.add(name + ":" + line, csv.problem());
                        continue;
                    }
                    if (csv.fieldCount() != columns) {
                        problems.add(name + ":" + line, fieldCountReason(csv.fieldCount(), columns,
                                columns == 3 ? RATING_HEADER : RATING_HEADER_TIMED));
                        continue;
                    }
                    try {
                        String user = csv.field(0);
                        String item = csv.field(1);
                        FieldRules.id("user", user);
                        FieldRules.id("item", item);
                        float rating = FieldRules.rating(csv.field(2), scale);
                        long us = columns == 4 ? FieldRules.timeMicros(csv.field(3)) : FieldRules.NO_TIME;
                        if (problems.any()) {
                            out = cancel(out); // keep checking the rest, but feed nothing more
                            continue;
                        }
                        out.number(line).tab().text(user).tab().text(item).tab().number(rating).tab();
                        if (us == FieldRules.NO_TIME) {
                            untimed = true;
                            out.nullValue();
                        } else {
                            timed = true;
                            out.number(us);
                        }
                        out.endRow();
                    } catch (FieldRules.Refused r) {
                        problems.add(name + ":" + line, r.getMessage());
                    }
                }
                if (problems.any()) {
                    cancel(out);
                    return new RatingsStaged(read, timed, untimed);
                }
                out.finish();
                return new RatingsStaged(read, timed, untimed);
            } catch (SQLException | IOException | RuntimeException e) {
                cancel(out);
                throw e;
            }
        }
    }

    private long stageTrust(CopyManager copy, Path file, Problems problems) throws SQLException, IOException {
        String name = file.toString();
        try (InputStream in = new BufferedInputStream(Files.newInputStream(file), 1 << 16);
             CsvRecords csv = new CsvRecords(in)) {
            int columns = header(csv, name, TRUST_HEADER, TRUST_HEADER_WEIGHTED, problems);
            if (columns < 0) {
                return 0;
            }
            // A COPY only while every row so far is good: once one is bad the transaction is lost anyway.
            CopyText out = problems.any() ? null : new CopyText(copy.copyIn("copy stage_trust (line, truster, trustee, weight) from stdin"));
            long read = 0;
            try {
                while (csv.next()) {
                    read++;
                    long line = csv.line();
                    if (csv.problem() != null) {
                        problems.add(name + ":" + line, csv.problem());
                        continue;
                    }
                    if (csv.fieldCount() != columns) {
                        problems.add(name + ":" + line, fieldCountReason(csv.fieldCount(), columns,
                                columns == 2 ? TRUST_HEADER : TRUST_HEADER_WEIGHTED));
                        continue;
                    }
                    try {
                        String truster = csv.field(0);
                        String trustee = csv.field(1);
                        FieldRules.id("truster", truster);
                        FieldRules.id("trustee", trustee);
                        FieldRules.notSelfTrust(truster, trustee);
                        float weight = columns == 3 ? FieldRules.weight(csv.field(2)) : 1f;
                        if (problems.any()) {
                            out = cancel(out);
                            continue;
                        }
                        out.number(line).tab().text(truster).tab().text(trustee).tab().number(weight).endRow();
                    } catch (FieldRules.Refused r) {
                        problems.add(name + ":" + line, r.getMessage());
                    }
                }
                if (problems.any()) {
                    cancel(out);
                    return read;
                }
                out.finish();
                return read;
            } catch (SQLException | IOException | RuntimeException e) {
                cancel(out);
                throw e;
            }
        }
    }

    /** Checks the header; returns the number of columns, or -1 after recording why the file cannot be read. */
    private static int header(CsvRecords csv, String name, List<String> plain, List<String> extended, Problems problems)
            throws IOException {
        String expected = "'" + String.join(",", plain) + "' or '" + String.join(",", extended) + "'";
        if (!csv.next()) {
            problems.add(name + ":1", "the file is empty; the first line must be the header " + expected);
            return -1;
        }
        List<String> found = java.util.Arrays.asList(java.util.Arrays.copyOf(fieldsOf(csv), csv.fieldCount()));
        if (csv.problem() == null && found.equals(plain)) {
            return plain.size();
        }
        if (csv.problem() == null && found.equals(extended)) {
            return extended.size();
        }
        problems.add(name + ":" + csv.line(), "the header is '" + csv.joined() + "'; expected " + expected);
        return -1;
    }

    private static String[] fieldsOf(CsvRecords csv) {
        String[] f = new String[csv.fieldCount()];
        for (int i = 0; i < f.length; i++) {
            f[i] = csv.field(i);
        }
        return f;
    }

    private static String fieldCountReason(int found, int expected, List<String> header) {
        return found + (found == 1 ? " field" : " fields") + ", expected " + expected + " (" + String.join(",", header) + ")";
    }

    private static void requireReadable(Path file) {
        if (file == null) {
            return;
        }
        if (!Files.exists(file)) {
            throw new BadInputException(file + ": no such file");
        }
        if (!Files.isRegularFile(file) || !Files.isReadable(file)) {
            throw new BadInputException(file + ": not a readable file");
        }
    }

    private static CopyText cancel(CopyText out) throws SQLException {
        if (out != null) {
            out.cancel();
        }
        return null;
    }

    private static void rollbackQuietly(Connection c) {
        try {
            c.rollback();
        } catch (SQLException e) {
            // The original failure is what matters; a broken connection is discarded by the pool.
        }
    }

}
