package dev.twofold.db.ingest;

import dev.twofold.db.BadInputException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.internal.BinaryCopyReader;
import dev.twofold.db.internal.BinaryCopyWriter;
import dev.twofold.db.internal.PausePoint;
import dev.twofold.db.internal.SqlFailures;
import java.io.BufferedInputStream;
import java.io.FilterInputStream;
import java.io.IOException;
import java.io.InputStream;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.SQLException;
import java.sql.Statement;
import java.time.Duration;
import java.util.Arrays;
import java.util.List;
import org.postgresql.PGConnection;
import org.postgresql.copy.CopyManager;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Loads a ratings CSV and/or a trust CSV in one transaction: stream-parse and validate every row,
 * map ids to dense indices, merge (a later rating of the same user and item replaces the earlier).
 * Any invalid row refuses everything with {@code FILE:LINE: reason} lines and nothing is written.
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
 * <ol>
 *   <li>Both files are parsed and checked completely before the database is touched; rows are kept
 *       as primitive arrays of local id numbers (about 24 bytes per rating plus the distinct ids).</li>
 *   <li>In one transaction: the distinct ids are COPYed to a temporary table, new ones inserted into
 *       {@code users}/{@code items} (sorted, so concurrent writers lock in the same order) and all
 *       indices read back.</li>
 *   <li>{@code ratings} and {@code trust} are locked against other writers (readers go on), the
 *       stored rows of the users in the file are read with binary COPY, and the merge is decided in
 *       memory by walking both sorted lists.</li>
 *   <li>New rows are binary-COPYed straight into the tables; changed rows go through a temporary
 *       table and one {@code UPDATE}. The database does only the writes that change something.</li>
 * </ol>
 */
public final class Importer {

    /** Session memory for the sorts and hashes of one import's statements. */
    static final String WORK_MEM = "256MB";

    private static final Logger LOG = LoggerFactory.getLogger(Importer.class);
    private static final List<String> RATING_HEADER = List.of("user", "item", "rating");
    private static final List<String> RATING_HEADER_TIMED = List.of("user", "item", "rating", "time");
    private static final List<String> TRUST_HEADER = List.of("truster", "trustee");
    private static final List<String> TRUST_HEADER_WEIGHTED = List.of("truster", "trustee", "weight");

    /** Rows between two progress reports while parsing or merging. */
    static final int PROGRESS_EVERY_ROWS = 1 << 16;

    private final Database database;
    private final RatingScale scale;
    private final ImportProgress progress;

    public Importer(Database database, RatingScale scale) {
        this(database, scale, ImportProgress.NONE);
    }

    /** @param progress told how far the import has come (bytes read per file, rows merged per table) */
    public Importer(Database database, RatingScale scale, ImportProgress progress) {
        this.database = database;
        this.scale = scale;
        this.progress = progress;
    }

    /**
     * Merges the files into what is stored ({@link ImportMode#APPEND}).
     *
     * @param ratings ratings CSV ({@code user,item,rating[,time]}) or null
     * @param trust   trust CSV ({@code truster,trustee[,weight]}) or null
     * @throws BadInputException when a file is missing or any row is invalid; nothing is written
     */
    public ImportReport importFiles(Path ratings, Path trust) {
        return importFiles(ratings, trust, ImportMode.APPEND);
    }

    /**
     * @param ratings ratings CSV ({@code user,item,rating[,time]}) or null
     * @param trust   trust CSV ({@code truster,trustee[,weight]}) or null
     * @param mode    append (merge) or replace (the given kinds of data become exactly the files' rows)
     * @throws BadInputException when a file is missing or any row is invalid; nothing is written
     */
    public ImportReport importFiles(Path ratings, Path trust, ImportMode mode) {
        if (ratings == null && trust == null) {
            throw new IllegalArgumentException("give a ratings file, a trust file or both");
        }
        requireReadable(ratings);
        requireReadable(trust);
        String what = (ratings != null ? ratings.toString() : "") + (ratings != null && trust != null ? " and " : "")
                + (trust != null ? trust.toString() : "");
        Phases phases = new Phases();
        IdDictionary users = new IdDictionary();
        IdDictionary items = new IdDictionary();
        Problems problems = new Problems();
        RatingRows r = new RatingRows();
        TrustRows t = new TrustRows();
        try {
            if (ratings != null) {
                parseRatings(ratings, users, items, r, problems);
            }
            if (trust != null) {
                parseTrust(trust, users, t, problems);
            }
        } catch (IOException e) {
            throw new BadInputException("cannot read " + what + ": " + e.getMessage());
        }
        if (problems.any()) {
            throw problems.refuse(what);
        }
        phases.done("parse and check");
        try (Connection c = database.dataSource().getConnection()) {
            c.setAutoCommit(false);
            try {
                ImportReport report = write(c, users, items, ratings == null ? null : r, trust == null ? null : t, mode,
                        phases);
                c.commit();
                LOG.debug("import of {}: {}", what, phases);
                return report;
            } catch (SQLException | IOException | RuntimeException e) {
                rollbackQuietly(c);
                throw e;
            }
        } catch (SQLException e) {
            throw SqlFailures.translate(e, "importing " + what, database.description());
        } catch (IOException e) {
            throw SqlFailures.translate(new SQLException(e.getMessage(), "08006", e), "importing " + what, database.description());
        }
    }

    // ---- writing ----------------------------------------------------------------------------------

    /** {@code r} or {@code t} is null when no file of that kind was given. */
    private ImportReport write(Connection c, IdDictionary users, IdDictionary items, RatingRows r, TrustRows t, ImportMode mode,
            Phases phases) throws SQLException, IOException {
        boolean replace = mode == ImportMode.REPLACE;
        CopyManager copy = c.unwrap(PGConnection.class).getCopyAPI();
        try (Statement s = c.createStatement()) {
            s.execute("set local work_mem = '" + WORK_MEM + "'");
        }
        long newUsers = resolve(c, copy, "users", users);
        long newItems = resolve(c, copy, "items", items);
        phases.done("ids");
        try (Statement s = c.createStatement()) {
            // Other writers wait until we commit; readers (snapshots, the service) go on.
            s.execute("lock table ratings, trust in share row exclusive mode");
        }
        Merged ratings = Merged.NOTHING;
        if (r != null && (r.n > 0 || replace)) {
            progress.start("writing ratings", r.n);
            ratings = mergeRatings(c, copy, users, items, r, replace);
            progress.finish(ratings.describe("ratings"));
        }
        phases.done("ratings");
        Merged trust = Merged.NOTHING;
        if (t != null && (t.n > 0 || replace)) {
            progress.start("writing trust edges", t.n);
            trust = mergeTrust(c, copy, users, t, replace);
            progress.finish(trust.describe("trust edges"));
        }
        phases.done("trust");
        PausePoint.reached("import-write");
        return new ImportReport(r == null ? 0 : r.n, ratings.written, t == null ? 0 : t.n, trust.written, newUsers, newItems,
                phases.total(), mode, ratings.deleted, trust.deleted);
    }

    /** Rows a merge wrote (inserted or changed) and deleted. */
    private record Merged(long written, long deleted) {
        static final Merged NOTHING = new Merged(0, 0);

        String describe(String what) {
            return written + " " + what + " written" + (deleted > 0 ? ", " + deleted + " deleted" : "");
        }
    }

    /** Deletes the given keys (user_idx << 32 | item_idx, or truster/trustee) from a table through a staged key list. */
    private static long deleteKeys(Connection c, CopyManager copy, String table, String first, String second, long[] keys,
            int n) throws SQLException {
        if (n == 0) {
            return 0;
        }
        String stage = "stage_" + table + "_deletes";
        try (Statement s = c.createStatement()) {
            s.execute("create temp table " + stage + " (" + first + " integer not null, " + second + " integer not null)"
                    + " on commit drop");
        }
        BinaryCopyWriter out = new BinaryCopyWriter(copy.copyIn("copy " + stage + " (" + first + ", " + second
                + ") from stdin (format binary)"));
        for (int i = 0; i < n; i++) {
            out.row(2).int4((int) (keys[i] >>> 32)).int4((int) keys[i]);
        }
        out.finish();
        try (Statement s = c.createStatement()) {
            s.execute("analyze " + stage);
            return s.executeUpdate("delete from " + table + " x using " + stage + " d where x." + first + " = d." + first
                    + " and x." + second + " = d." + second);
        }
    }

    /** Inserts the ids the table does not know yet and fills {@code ids.idx}; returns how many were new. */
    private static long resolve(Connection c, CopyManager copy, String table, IdDictionary ids) throws SQLException, IOException {
        ids.idx = new int[ids.size()];
        if (ids.size() == 0) {
            return 0;
        }
        String stage = "stage_" + table;
        try (Statement s = c.createStatement()) {
            s.execute("create temp table " + stage + " (ord integer not null, external_id text not null) on commit drop");
        }
        CopyText out = new CopyText(copy.copyIn("copy " + stage + " (ord, external_id) from stdin"));
        for (int i = 0; i < ids.size(); i++) {
            out.number(i).tab().text(ids.id(i)).endRow();
        }
        out.finish();
        long inserted;
        try (Statement s = c.createStatement()) {
            s.execute("analyze " + stage);
            inserted = s.executeUpdate("insert into " + table + " (external_id)"
                    + " select n.external_id from " + stage + " n"
                    + " where not exists (select 1 from " + table + " t where t.external_id = n.external_id)"
                    + " order by n.external_id on conflict (external_id) do nothing");
        }
        int found = 0;
        try (BinaryCopyReader in = BinaryCopyReader.open(copy,
                "select n.ord, t.idx from " + stage + " n join " + table + " t on t.external_id = n.external_id")) {
            while (in.nextRow()) {
                int ord = in.int4();
                ids.idx[ord] = in.int4();
                found++;
            }
        }
        if (found != ids.size()) {
            throw new SQLException(table + ": " + (ids.size() - found) + " ids vanished while importing (deleted concurrently?)");
        }
        return inserted;
    }

    private Merged mergeRatings(Connection c, CopyManager copy, IdDictionary users, IdDictionary items, RatingRows r,
            boolean replace) throws SQLException, IOException {
        // Incoming: one row per (user, item) by the sequential rule, sorted by key.
        long[] keys = new long[r.n];
        for (int i = 0; i < r.n; i++) {
            keys[i] = key(users.idx[r.user[i]], items.idx[r.item[i]]);
        }
        int[] order = StableOrder.of(keys, r.n);
        int m = 0;
        long[] inKey = new long[r.n];
        float[] inRating = new float[r.n];
        long[] inMicros = new long[r.n];
        for (int p = 0; p < r.n; ) {
            int winner = order[p];
            long k = keys[winner];
            int q = p + 1;
            for (; q < r.n && keys[order[q]] == k; q++) {
                int next = order[q];
                if (replaces(r.micros[next], r.micros[winner])) {
                    winner = next;
                }
            }
            inKey[m] = k;
            inRating[m] = r.rating[winner];
            inMicros[m] = r.micros[winner];
            m++;
            p = q;
        }

        // Stored rows, sorted by key: of the users in the file (append), or all of them (replace).
        Stored stored = replace ? readAllRatings(copy) : readStoredRatings(c, copy, inKey, m);
        long[] deletes = new long[replace ? stored.n : 0];
        int d = 0;

        try (Statement s = c.createStatement()) {
            s.execute("create temp table stage_rating_updates (user_idx integer not null, item_idx integer not null,"
                    + " rating real not null, rated_at timestamptz) on commit drop");
        }
        BinaryCopyWriter fresh = new BinaryCopyWriter(copy.copyIn(
                "copy ratings (user_idx, item_idx, rating, rated_at) from stdin (format binary)"));
        // Two COPYs cannot be open on one connection: collect updates first, then send them.
        int[] updates = new int[Math.min(m, stored.n)];
        int u = 0;
        int j = 0;
        try {
            for (int i = 0; i < m; i++) {
                long k = inKey[i];
                while (j < stored.n && stored.key[j] < k) {
                    if (replace) {
                        deletes[d++] = stored.key[j];
                    }
                    j++;
                }
                if (j < stored.n && stored.key[j] == k) {
                    boolean changes = inRating[i] != stored.rating[j] || inMicros[i] != stored.micros[j];
                    if (changes && (replace || replaces(inMicros[i], stored.micros[j]))) {
                        updates[u++] = i;
                    }
                    j++; // matched: neither kept for a later key nor deleted
                } else {
                    ratingRow(fresh, k, inRating[i], inMicros[i]);
                }
                if ((i & (PROGRESS_EVERY_ROWS - 1)) == 0) {
                    progress.advance(i);
                }
            }
            for (; replace && j < stored.n; j++) {
                deletes[d++] = stored.key[j];
            }
            fresh.finish();
        } catch (SQLException | RuntimeException e) {
            fresh.cancel();
            throw e;
        }
        long written = fresh.rows();
        if (u > 0) {
            BinaryCopyWriter changed = new BinaryCopyWriter(copy.copyIn(
                    "copy stage_rating_updates (user_idx, item_idx, rating, rated_at) from stdin (format binary)"));
            for (int x = 0; x < u; x++) {
                int i = updates[x];
                ratingRow(changed, inKey[i], inRating[i], inMicros[i]);
            }
            changed.finish();
            try (Statement s = c.createStatement()) {
                written += s.executeUpdate("update ratings r set rating = s.rating, rated_at = s.rated_at, updated_at = now()"
                        + " from stage_rating_updates s where r.user_idx = s.user_idx and r.item_idx = s.item_idx");
            }
        }
        long deleted = deleteKeys(c, copy, "ratings", "user_idx", "item_idx", deletes, d);
        return new Merged(written, deleted);
    }

    /** Every stored rating, sorted by key. */
    private static Stored readAllRatings(CopyManager copy) throws SQLException, IOException {
        return readStored(copy, "select user_idx, item_idx, rating, rated_at from ratings order by user_idx, item_idx");
    }

    /** The ratings a query returns as (user_idx, item_idx, rating, rated_at), in its order. */
    private static Stored readStored(CopyManager copy, String query) throws SQLException, IOException {
        long[] key = new long[1024];
        float[] rating = new float[1024];
        long[] micros = new long[1024];
        int n = 0;
        try (BinaryCopyReader in = BinaryCopyReader.open(copy, query)) {
            while (in.nextRow()) {
                if (n == key.length) {
                    key = Arrays.copyOf(key, n * 2);
                    rating = Arrays.copyOf(rating, n * 2);
                    micros = Arrays.copyOf(micros, n * 2);
                }
                key[n] = key(in.int4(), in.int4());
                rating[n] = in.float4();
                micros[n] = in.timestamptzOr(FieldRules.NO_TIME);
                n++;
            }
        }
        return new Stored(n, key, rating, micros);
    }

    private static void ratingRow(BinaryCopyWriter out, long key, float rating, long micros) throws SQLException {
        out.row(4).int4((int) (key >>> 32)).int4((int) key).float4(rating);
        if (micros == FieldRules.NO_TIME) {
            out.nullValue();
        } else {
            out.timestamptz(micros);
        }
    }

    /** The import's one rule: an incoming rating replaces the current one unless both have times and it is older. */
    static boolean replaces(long incomingMicros, long currentMicros) {
        return incomingMicros == FieldRules.NO_TIME || currentMicros == FieldRules.NO_TIME || incomingMicros >= currentMicros;
    }

    private record Stored(int n, long[] key, float[] rating, long[] micros) {
    }

    private static Stored readStoredRatings(Connection c, CopyManager copy, long[] inKey, int m) throws SQLException, IOException {
        stageTouchedUsers(c, copy, inKey, m, "touched_raters");
        return readStored(copy, "select r.user_idx, r.item_idx, r.rating, r.rated_at from ratings r join touched_raters t"
                + " on t.user_idx = r.user_idx order by r.user_idx, r.item_idx");
    }

    /** A temporary table of the distinct first halves (user indices) of sorted keys. */
    private static void stageTouchedUsers(Connection c, CopyManager copy, long[] sortedKeys, int m, String table)
            throws SQLException {
        try (Statement s = c.createStatement()) {
            s.execute("create temp table " + table + " (user_idx integer primary key) on commit drop");
        }
        BinaryCopyWriter out = new BinaryCopyWriter(copy.copyIn("copy " + table + " (user_idx) from stdin (format binary)"));
        int last = -1;
        for (int i = 0; i < m; i++) {
            int user = (int) (sortedKeys[i] >>> 32);
            if (i == 0 || user != last) {
                out.row(1).int4(user);
                last = user;
            }
        }
        out.finish();
        try (Statement s = c.createStatement()) {
            s.execute("analyze " + table);
        }
    }

    private Merged mergeTrust(Connection c, CopyManager copy, IdDictionary users, TrustRows t, boolean replace)
            throws SQLException, IOException {
        long[] keys = new long[t.n];
        for (int i = 0; i < t.n; i++) {
            keys[i] = key(users.idx[t.truster[i]], users.idx[t.trustee[i]]);
        }
        int[] order = StableOrder.of(keys, t.n);
        long[] inKey = new long[t.n];
        float[] inWeight = new float[t.n];
        int m = 0;
        for (int p = 0; p < t.n; ) {
            int q = p + 1;
            while (q < t.n && keys[order[q]] == keys[order[p]]) {
                q++;
            }
            int last = order[q - 1]; // the later line wins
            inKey[m] = keys[last];
            inWeight[m] = t.weight[last];
            m++;
            p = q;
        }
        String storedRows;
        if (replace) {
            storedRows = "select truster_idx, trustee_idx, weight from trust order by truster_idx, trustee_idx";
        } else {
            stageTouchedUsers(c, copy, inKey, m, "touched_trusters");
            storedRows = "select x.truster_idx, x.trustee_idx, x.weight from trust x join touched_trusters t"
                    + " on t.user_idx = x.truster_idx order by x.truster_idx, x.trustee_idx";
        }
        long[] storedKey = new long[1024];
        float[] storedWeight = new float[1024];
        int n = 0;
        try (BinaryCopyReader in = BinaryCopyReader.open(copy, storedRows)) {
            while (in.nextRow()) {
                if (n == storedKey.length) {
                    storedKey = Arrays.copyOf(storedKey, n * 2);
                    storedWeight = Arrays.copyOf(storedWeight, n * 2);
                }
                storedKey[n] = key(in.int4(), in.int4());
                storedWeight[n] = in.float4();
                n++;
            }
        }
        try (Statement s = c.createStatement()) {
            s.execute("create temp table stage_trust_updates (truster_idx integer not null, trustee_idx integer not null,"
                    + " weight real not null) on commit drop");
        }
        int[] updates = new int[Math.min(m, n)];
        int u = 0;
        int j = 0;
        long[] deletes = new long[replace ? n : 0];
        int d = 0;
        BinaryCopyWriter fresh = new BinaryCopyWriter(copy.copyIn("copy trust (truster_idx, trustee_idx, weight) from stdin (format binary)"));
        try {
            for (int i = 0; i < m; i++) {
                while (j < n && storedKey[j] < inKey[i]) {
                    if (replace) {
                        deletes[d++] = storedKey[j];
                    }
                    j++;
                }
                if (j < n && storedKey[j] == inKey[i]) {
                    if (storedWeight[j] != inWeight[i]) {
                        updates[u++] = i;
                    }
                    j++; // matched: neither kept for a later key nor deleted
                } else {
                    fresh.row(3).int4((int) (inKey[i] >>> 32)).int4((int) inKey[i]).float4(inWeight[i]);
                }
                if ((i & (PROGRESS_EVERY_ROWS - 1)) == 0) {
                    progress.advance(i);
                }
            }
            for (; replace && j < n; j++) {
                deletes[d++] = storedKey[j];
            }
            fresh.finish();
        } catch (SQLException | RuntimeException e) {
            fresh.cancel();
            throw e;
        }
        long written = fresh.rows();
        if (u > 0) {
            BinaryCopyWriter changed = new BinaryCopyWriter(copy.copyIn(
                    "copy stage_trust_updates (truster_idx, trustee_idx, weight) from stdin (format binary)"));
            for (int x = 0; x < u; x++) {
                int i = updates[x];
                changed.row(3).int4((int) (inKey[i] >>> 32)).int4((int) inKey[i]).float4(inWeight[i]);
            }
            changed.finish();
            try (Statement s = c.createStatement()) {
                written += s.executeUpdate("update trust x set weight = s.weight, updated_at = now() from stage_trust_updates s"
                        + " where x.truster_idx = s.truster_idx and x.trustee_idx = s.trustee_idx");
            }
        }
        long deleted = deleteKeys(c, copy, "trust", "truster_idx", "trustee_idx", deletes, d);
        return new Merged(written, deleted);
    }

    private static long key(int a, int b) {
        return ((long) a << 32) | (b & 0xffffffffL);
    }

    // ---- parsing ------------------------------------------------------------------------------------

    /** Parsed ratings in file order, ids as local numbers. */
    static final class RatingRows {
        int n;
        int[] user = new int[1024];
        int[] item = new int[1024];
        float[] rating = new float[1024];
        long[] micros = new long[1024];

        void add(int u, int i, float r, long us) {
            if (n == user.length) {
                user = Arrays.copyOf(user, n * 2);
                item = Arrays.copyOf(item, n * 2);
                rating = Arrays.copyOf(rating, n * 2);
                micros = Arrays.copyOf(micros, n * 2);
            }
            user[n] = u;
            item[n] = i;
            rating[n] = r;
            micros[n] = us;
            n++;
        }
    }

    /** Parsed trust edges in file order. */
    static final class TrustRows {
        int n;
        int[] truster = new int[1024];
        int[] trustee = new int[1024];
        float[] weight = new float[1024];

        void add(int a, int b, float w) {
            if (n == truster.length) {
                truster = Arrays.copyOf(truster, n * 2);
                trustee = Arrays.copyOf(trustee, n * 2);
                weight = Arrays.copyOf(weight, n * 2);
            }
            truster[n] = a;
            trustee[n] = b;
            weight[n] = w;
            n++;
        }
    }

    private void parseRatings(Path file, IdDictionary users, IdDictionary items, RatingRows rows, Problems problems)
            throws IOException {
        String name = file.toString();
        progress.start("reading " + file.getFileName(), Files.size(file));
        try (CountingStream in = new CountingStream(new BufferedInputStream(Files.newInputStream(file), 1 << 16));
             CsvRecords csv = new CsvRecords(in)) {
            int columns = header(csv, name, RATING_HEADER, RATING_HEADER_TIMED, problems);
            if (columns < 0) {
                return;
            }
            long records = 0;
            while (csv.next()) {
                if ((++records & (PROGRESS_EVERY_ROWS - 1)) == 0) {
                    progress.advance(in.count);
                }
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
                    int u = checkedLocal(users, "user", user);
                    int i = checkedLocal(items, "item", item);
                    float rating = FieldRules.rating(csv.field(2), scale);
                    long us = columns == 4 ? FieldRules.timeMicros(csv.field(3)) : FieldRules.NO_TIME;
                    if (!problems.any()) {
                        rows.add(u >= 0 ? u : users.local(user), i >= 0 ? i : items.local(item), rating, us);
                    }
                } catch (FieldRules.Refused r) {
                    problems.add(name + ":" + line, r.getMessage());
                }
            }
            progress.finish(records + " rows");
        }
    }

    private void parseTrust(Path file, IdDictionary users, TrustRows rows, Problems problems) throws IOException {
        String name = file.toString();
        progress.start("reading " + file.getFileName(), Files.size(file));
        try (CountingStream in = new CountingStream(new BufferedInputStream(Files.newInputStream(file), 1 << 16));
             CsvRecords csv = new CsvRecords(in)) {
            int columns = header(csv, name, TRUST_HEADER, TRUST_HEADER_WEIGHTED, problems);
            if (columns < 0) {
                return;
            }
            long records = 0;
            while (csv.next()) {
                if ((++records & (PROGRESS_EVERY_ROWS - 1)) == 0) {
                    progress.advance(in.count);
                }
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
                    int a = checkedLocal(users, "truster", truster);
                    int b = checkedLocal(users, "trustee", trustee);
                    FieldRules.notSelfTrust(truster, trustee);
                    float weight = columns == 3 ? FieldRules.weight(csv.field(2)) : 1f;
                    if (!problems.any()) {
                        a = a >= 0 ? a : users.local(truster);
                        rows.add(a, b >= 0 ? b : users.local(trustee), weight);
                    }
                } catch (FieldRules.Refused r) {
                    problems.add(name + ":" + line, r.getMessage());
                }
            }
            progress.finish(records + " rows");
        }
    }

    /**
     * The local id of an id already met (it was checked then), or -1 after checking a new one with
     * {@link FieldRules#id}: each distinct id is checked once, not on every row that names it.
     */
    private static int checkedLocal(IdDictionary ids, String label, String id) throws FieldRules.Refused {
        int known = ids.find(id);
        if (known < 0) {
            FieldRules.id(label, id);
        }
        return known;
    }

    /** Checks the header; returns the number of columns, or -1 after recording why the file cannot be read. */
    private static int header(CsvRecords csv, String name, List<String> plain, List<String> extended, Problems problems)
            throws IOException {
        String expected = "'" + String.join(",", plain) + "' or '" + String.join(",", extended) + "'";
        if (!csv.next()) {
            problems.add(name + ":1", "the file is empty; the first line must be the header " + expected);
            return -1;
        }
        String[] fields = new String[csv.fieldCount()];
        for (int i = 0; i < fields.length; i++) {
            fields[i] = csv.field(i);
        }
        List<String> found = Arrays.asList(fields);
        if (csv.problem() == null && found.equals(plain)) {
            return plain.size();
        }
        if (csv.problem() == null && found.equals(extended)) {
            return extended.size();
        }
        problems.add(name + ":" + csv.line(), "the header is '" + csv.joined() + "'; expected " + expected);
        return -1;
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

    private static void rollbackQuietly(Connection c) {
        try {
            c.rollback();
        } catch (SQLException e) {
            // The original failure is what matters; a broken connection is discarded by the pool.
        }
    }

    /** Counts the bytes read through it, for progress. */
    private static final class CountingStream extends FilterInputStream {
        long count;

        CountingStream(InputStream in) {
            super(in);
        }

        @Override
        public int read() throws IOException {
            int b = super.read();
            if (b >= 0) {
                count++;
            }
            return b;
        }

        @Override
        public int read(byte[] b, int off, int len) throws IOException {
            int n = super.read(b, off, len);
            if (n > 0) {
                count += n;
            }
            return n;
        }

        @Override
        public long skip(long n) throws IOException {
            long skipped = super.skip(n);
            count += skipped;
            return skipped;
        }
    }

    /** Wall time of each step, for the debug log. */
    private static final class Phases {
        private final long started = System.nanoTime();
        private final StringBuilder text = new StringBuilder();
        private long last = started;

        void done(String step) {
            long now = System.nanoTime();
            text.append(text.length() == 0 ? "" : ", ").append(step).append(' ').append((now - last) / 1_000_000).append(" ms");
            last = now;
        }

        Duration total() {
            return Duration.ofNanos(System.nanoTime() - started);
        }

        @Override
        public String toString() {
            return text.toString();
        }
    }
}
