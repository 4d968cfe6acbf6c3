package dev.twofold.db.registry;

import dev.twofold.db.connect.Database;
import dev.twofold.db.internal.BinaryCopyReader;
import dev.twofold.db.internal.BinaryCopyWriter;
import dev.twofold.db.internal.PausePoint;
import dev.twofold.db.internal.ReadOnlySnapshot;
import dev.twofold.db.internal.SqlFailures;
import java.io.IOException;
import java.sql.Array;
import java.sql.Connection;
import java.sql.PreparedStatement;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Statement;
import java.time.OffsetDateTime;
import java.util.ArrayList;
import java.util.BitSet;
import java.util.List;
import java.util.Objects;
import java.util.Optional;
import java.util.Set;
import org.postgresql.PGConnection;
import org.postgresql.copy.CopyManager;

/**
 * The versioned models in PostgreSQL: headers, factors (binary float32 rows) and the pointer to the
 * active model. Promotion moves the pointer in one transaction, so readers see the old or the new
 * model, never a mix, and sends {@code NOTIFY} on {@value #NOTIFY_CHANNEL} with the new model id
 * (delivered when the transaction commits) so running services can load it.
 *
 * <p>Life of a version: {@code training} (created, factors stored) → {@code candidate},
 * {@code rejected} or {@code failed} ({@link #finish}) → {@code active} ({@link #promote}) →
 * {@code retired} when another one is promoted. Any version but a {@code training} or
 * {@code failed} one can be promoted, so a retired version can come back (that is a rollback), and
 * a rejected one can be promoted by hand. A {@code training} version whose trainer died is failed by
 * the next trainer ({@link #failOrphans}, only under the {@link RetrainLock}); failed versions lose
 * their factors at once, since nothing can use them. {@link #retain} deletes old versions but never
 * the active one or the one a rollback returns to.
 *
 * <p>These are the operations both the command line ({@code twofold models}, {@code twofold train})
 * and the HTTP service's admin routes call, so the rules are the same everywhere.
 */
public final class ModelRegistry {

    public static final String TRAINING = "training";
    public static final String CANDIDATE = "candidate";
    public static final String ACTIVE = "active";
    public static final String REJECTED = "rejected";
    public static final String FAILED = "failed";
    public static final String RETIRED = "retired";
    /** The channel a promotion notifies; the payload is the new active model id. */
    public static final String NOTIFY_CHANNEL = "twofold_models";
    /** The reason stored on a {@code training} version whose trainer ended without finishing it. */
    public static final String ORPHAN_REASON = "trainer process ended without finishing";

    private static final Set<String> FINAL_STATUSES = Set.of(CANDIDATE, REJECTED, FAILED);
    private static final String HEADER_COLUMNS = "id, status, rank, coupling, lambda, trust_weight, trust_alpha, scale_min,"
            + " scale_max, global_mean, num_users, num_items, created_at, finished_at, params::text, metrics::text,"
            + " counts::text, reason";

    private final Database database;

    public ModelRegistry(Database database) {
        this.database = database;
    }

    /** Inserts a new version with status {@code training} from the draft's fields (its id and status are ignored); returns its id. */
    public long create(ModelHeader draft) {
        return inTransaction("creating a model version", c -> {
            try (PreparedStatement ps = c.prepareStatement("insert into models (status, rank, coupling, lambda, trust_weight,"
                    + " trust_alpha, scale_min, scale_max, global_mean, num_users, num_items, params, counts)"
                    + " values ('training', ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, coalesce(?::jsonb, '{}'), coalesce(?::jsonb, '{}'))"
                    + " returning id")) {
                ps.setInt(1, draft.rank());
                ps.setString(2, draft.coupling());
                ps.setFloat(3, draft.lambda());
                ps.setFloat(4, draft.trustWeight());
                ps.setFloat(5, draft.trustAlpha());
                ps.setFloat(6, draft.scaleMin());
                ps.setFloat(7, draft.scaleMax());
                ps.setFloat(8, draft.globalMean());
                ps.setInt(9, draft.numUsers());
                ps.setInt(10, draft.numItems());
                ps.setString(11, draft.paramsJson());
                ps.setString(12, draft.countsJson());
                try (ResultSet rs = ps.executeQuery()) {
                    rs.next();
                    return rs.getLong(1);
                }
            }
        });
    }

    /**
     * Writes the factors of a version that is still {@code training}, with binary COPY: the user
     * and item rows whose bit is set, and the non-zero rows of the trust factors when present.
     *
     * @throws ModelStateException when the version is no longer training or already has factors
     * @throws IllegalArgumentException when the arrays do not match the version's rank and sizes
     */
    public void storeFactors(long modelId, ModelFactors factors) {
        inTransaction("storing the factors of model " + modelId, c -> {
            ModelHeader h = lockedHeader(c, modelId);
            if (!TRAINING.equals(h.status())) {
                throw new ModelStateException("model " + modelId + " is " + h.status() + "; factors can be stored only while it is training");
            }
            requireShape(h, factors);
            try (Statement s = c.createStatement();
                 ResultSet rs = s.executeQuery("select exists (select 1 from model_user_factors where model_id = " + modelId + ")"
                         + " or exists (select 1 from model_item_factors where model_id = " + modelId + ")")) {
                rs.next();
                if (rs.getBoolean(1)) {
                    throw new ModelStateException("model " + modelId + " already has factors; create a new version instead");
                }
            }
            CopyManager copy = c.unwrap(PGConnection.class).getCopyAPI();
            int k = factors.rank();
            BinaryCopyWriter users = new BinaryCopyWriter(copy.copyIn(
                    "copy model_user_factors (model_id, user_idx, bias, factors) from stdin (format binary)"));
            for (int u = factors.knownUsers().nextSetBit(0); u >= 0; u = factors.knownUsers().nextSetBit(u + 1)) {
                users.row(4).int8(modelId).int4(u).float4(factors.userBias()[u]).bytea(factors.userFactors(), u * k, k);
            }
            users.finish();
            PausePoint.reached("store-factors");
            BinaryCopyWriter items = new BinaryCopyWriter(copy.copyIn(
                    "copy model_item_factors (model_id, item_idx, bias, popularity, factors) from stdin (format binary)"));
            for (int i = factors.knownItems().nextSetBit(0); i >= 0; i = factors.knownItems().nextSetBit(i + 1)) {
                items.row(5).int8(modelId).int4(i).float4(factors.itemBias()[i]).float4(factors.itemPopularity()[i])
                        .bytea(factors.itemFactors(), i * k, k);
            }
            items.finish();
            if (factors.trustFactors() != null) {
                float[] z = factors.trustFactors();
                BinaryCopyWriter trust = new BinaryCopyWriter(copy.copyIn(
                        "copy model_trust_factors (model_id, user_idx, factors) from stdin (format binary)"));
                for (int u = 0; u < factors.numUsers(); u++) {
                    if (nonZero(z, u * k, k)) {
                        trust.row(3).int8(modelId).int4(u).bytea(z, u * k, k);
                    }
                }
                trust.finish();
            }
            return null;
        });
    }

    /** Sets the final status ({@code candidate}, {@code rejected} or {@code failed}), metrics and reason. */
    public void finish(long modelId, String status, String metricsJson, String reason) {
        if (!FINAL_STATUSES.contains(status)) {
            throw new IllegalArgumentException("a training run finishes as candidate, rejected or failed, not " + status);
        }
        inTransaction("finishing model " + modelId, c -> {
            ModelHeader h = lockedHeader(c, modelId);
            if (!TRAINING.equals(h.status())) {
                throw new ModelStateException("model " + modelId + " is already " + h.status() + "; only a training version can finish");
            }
            try (PreparedStatement ps = c.prepareStatement("update models set status = ?, metrics = coalesce(?::jsonb, metrics),"
                    + " reason = ?, finished_at = now() where id = ?")) {
                ps.setString(1, status);
                ps.setString(2, metricsJson);
                ps.setString(3, reason);
                ps.setLong(4, modelId);
                ps.executeUpdate();
            }
            if (FAILED.equals(status)) {
                dropFactors(c, List.of(modelId));
            }
            return null;
        });
    }

    /**
     * Replaces the metrics and reason of a finished version without changing its status (a trainer
     * whose promotion did not happen records why).
     *
     * @throws ModelStateException when the version is still training
     */
    public void annotate(long modelId, String metricsJson, String reason) {
        inTransaction("annotating model " + modelId, c -> {
            ModelHeader h = lockedHeader(c, modelId);
            if (TRAINING.equals(h.status())) {
                throw new ModelStateException("model " + modelId + " is still training; finish it instead");
            }
            try (PreparedStatement ps = c.prepareStatement("update models set metrics = coalesce(?::jsonb, metrics), reason = ?"
                    + " where id = ?")) {
                ps.setString(1, metricsJson);
                ps.setString(2, reason);
                ps.setLong(3, modelId);
                ps.executeUpdate();
            }
            return null;
        });
    }

    /**
     * Marks every {@code training} version {@code failed} with {@link #ORPHAN_REASON} and drops its
     * factors; returns their ids, oldest first. Only the holder of the retrain lock may call this, and
     * before it creates its own version: while it holds the lock no other trainer is alive, so every
     * {@code training} version belongs to a trainer that died (killed, crashed, lost its machine).
     *
     * @throws dev.twofold.db.DatabaseFailureException when the lock is no longer held
     */
    public List<Long> failOrphans(RetrainLock lock) {
        lock.verifyHeld();
        return inTransaction("failing versions whose trainer ended", c -> {
            List<Long> ids = new ArrayList<>();
            try (PreparedStatement ps = c.prepareStatement("update models set status = 'failed', reason = ?, finished_at = now()"
                    + " where status = 'training' returning id")) {
                ps.setString(1, ORPHAN_REASON);
                try (ResultSet rs = ps.executeQuery()) {
                    while (rs.next()) {
                        ids.add(rs.getLong(1));
                    }
                }
            }
            ids.sort(null);
            dropFactors(c, ids);
            return ids;
        });
    }

    /**
     * Makes a finished version active; the previous active one becomes {@code retired} and is
     * remembered for rollback. Promoting the active version again changes nothing.
     *
     * @throws ModelStateException for a version that is {@code training} or {@code failed}
     */
    public void promote(long modelId) {
        inTransaction("promoting model " + modelId, c -> {
            promoteLocked(c, modelId);
            return null;
        });
    }

    /**
     * Promotes a finished version only if the active version is still {@code expectedActive} (null:
     * no model active), in one transaction; returns whether it did. A trainer compares its candidate
     * with the active model and then promotes it this way, so a model promoted or rolled back by
     * hand in the meantime is never replaced by a candidate that was judged against another model.
     *
     * @throws ModelStateException for a version that is {@code training} or {@code failed}
     */
    public boolean promoteIfActive(long modelId, Long expectedActive) {
        return inTransaction("promoting model " + modelId, c -> {
            lockPointer(c);
            Long current = null;
            try (Statement s = c.createStatement(); ResultSet rs = s.executeQuery("select model_id from active_model")) {
                if (rs.next()) {
                    current = rs.getLong(1);
                }
            }
            if (!Objects.equals(current, expectedActive)) {
                return false;
            }
            promoteLocked(c, modelId);
            return true;
        });
    }

    /**
     * Promotes the version that was active before the current one; returns its id. Rolling back
     * twice returns to where it started.
     *
     * @throws ModelStateException when no model is active or none was active before it
     */
    public long rollback() {
        return inTransaction("rolling back the active model", c -> {
            lockPointer(c);
            Long previous = null;
            try (Statement s = c.createStatement(); ResultSet rs = s.executeQuery("select model_id, previous_model_id from active_model")) {
                if (rs.next()) {
                    long p = rs.getLong(2);
                    previous = rs.wasNull() ? null : p;
                }
            }
            if (previous == null) {
                throw new ModelStateException("there is no earlier active model to roll back to");
            }
            promoteLocked(c, previous);
            return previous;
        });
    }

    /**
     * Deletes a version and its factors (retention). The active version and the one a rollback
     * would return to are kept.
     *
     * @throws ModelStateException for the active or the previous version
     */
    public void delete(long modelId) {
        inTransaction("deleting model " + modelId, c -> {
            lockPointer(c);
            lockedHeader(c, modelId);
            try (Statement s = c.createStatement();
                 ResultSet rs = s.executeQuery("select model_id, previous_model_id from active_model")) {
                if (rs.next() && (rs.getLong(1) == modelId || rs.getLong(2) == modelId)) {
                    throw new ModelStateException("model " + modelId + " is " + (rs.getLong(1) == modelId ? "active" : "the rollback target")
                            + " and cannot be deleted");
                }
            }
            for (String table : List.of("model_user_factors", "model_item_factors", "model_trust_factors", "models")) {
                try (PreparedStatement ps = c.prepareStatement("delete from " + table + " where "
                        + (table.equals("models") ? "id" : "model_id") + " = ?")) {
                    ps.setLong(1, modelId);
                    ps.executeUpdate();
                }
            }
            return null;
        });
    }

    /**
     * Retention: keeps the {@code keep} newest versions (by id, whatever their status) and deletes
     * the older ones with their factors — except the active version, the one a rollback returns to,
     * and any version still {@code training}. Returns the deleted ids, oldest first.
     *
     * @throws IllegalArgumentException when {@code keep} is outside {@link Retention}'s range
     */
    public List<Long> retain(int keep) {
        new Retention(keep); // validates
        return inTransaction("deleting old model versions", c -> {
            lockPointer(c);
            List<Long> ids = new ArrayList<>();
            try (PreparedStatement ps = c.prepareStatement("select m.id from models m"
                    + " where m.status <> 'training' and m.id not in (select model_id from active_model)"
                    + " and m.id not in (select previous_model_id from active_model where previous_model_id is not null)"
                    + " and m.id < all (select id from models order by id desc limit ?)"
                    + " order by m.id for update")) {
                ps.setInt(1, keep);
                try (ResultSet rs = ps.executeQuery()) {
                    while (rs.next()) {
                        ids.add(rs.getLong(1));
                    }
                }
            }
            dropFactors(c, ids);
            try (PreparedStatement ps = c.prepareStatement("delete from models where id = any (?)")) {
                ps.setArray(1, c.createArrayOf("int8", ids.toArray()));
                ps.executeUpdate();
            }
            return ids;
        });
    }

    public Optional<ModelHeader> active() {
        return ReadOnlySnapshot.read(database, "reading the active model", (c, copy) -> {
            try (Statement s = c.createStatement(); ResultSet rs = s.executeQuery("select " + prefixed("m") + " from active_model a"
                    + " join models m on m.id = a.model_id")) {
                return rs.next() ? Optional.of(header(rs)) : Optional.<ModelHeader>empty();
            }
        });
    }

    /** The id of the version that was active before the current one, if any (what {@link #rollback} returns to). */
    public Optional<Long> previous() {
        return ReadOnlySnapshot.read(database, "reading the previous model", (c, copy) -> {
            try (Statement s = c.createStatement(); ResultSet rs = s.executeQuery("select previous_model_id from active_model")) {
                if (rs.next()) {
                    long p = rs.getLong(1);
                    return rs.wasNull() ? Optional.<Long>empty() : Optional.of(p);
                }
                return Optional.<Long>empty();
            }
        });
    }

    public Optional<ModelHeader> find(long modelId) {
        return ReadOnlySnapshot.read(database, "reading model " + modelId, (c, copy) -> find(c, modelId, false));
    }

    /** All versions, newest first. */
    public List<ModelHeader> list() {
        return ReadOnlySnapshot.read(database, "listing the models", (c, copy) -> {
            List<ModelHeader> out = new ArrayList<>();
            try (Statement s = c.createStatement(); ResultSet rs = s.executeQuery("select " + HEADER_COLUMNS + " from models order by id desc")) {
                while (rs.next()) {
                    out.add(header(rs));
                }
            }
            return out;
        });
    }

    /**
     * The factors of a version, as arrays sized by its header ({@code numUsers × rank},
     * {@code numItems × rank}); rows that were not stored are zero with their bit clear. Trust
     * factors are present when the coupling is {@code shared} or any were stored.
     *
     * @throws UnknownModelException when there is no such version
     */
    public ModelFactors loadFactors(long modelId) {
        return ReadOnlySnapshot.read(database, "loading the factors of model " + modelId, (c, copy) -> {
            ModelHeader h = find(c, modelId, false).orElseThrow(() -> new UnknownModelException(modelId));
            int k = h.rank();
            int nu = h.numUsers();
            int ni = h.numItems();
            float[] p = new float[nu * k];
            float[] bu = new float[nu];
            BitSet knownUsers = new BitSet(nu);
            try (BinaryCopyReader in = BinaryCopyReader.open(copy,
                    "select user_idx, bias, factors from model_user_factors where model_id = " + modelId)) {
                while (in.nextRow()) {
                    int u = checkIndex(in.int4(), nu, "user", modelId);
                    bu[u] = in.float4();
                    in.float32s(p, u * k, k);
                    knownUsers.set(u);
                }
            }
            float[] q = new float[ni * k];
            float[] bi = new float[ni];
            float[] popularity = new float[ni];
            BitSet knownItems = new BitSet(ni);
            try (BinaryCopyReader in = BinaryCopyReader.open(copy,
                    "select item_idx, bias, popularity, factors from model_item_factors where model_id = " + modelId)) {
                while (in.nextRow()) {
                    int i = checkIndex(in.int4(), ni, "item", modelId);
                    bi[i] = in.float4();
                    popularity[i] = in.float4();
                    in.float32s(q, i * k, k);
                    knownItems.set(i);
                }
            }
            float[] z = null;
            try (BinaryCopyReader in = BinaryCopyReader.open(copy,
                    "select user_idx, factors from model_trust_factors where model_id = " + modelId)) {
                while (in.nextRow()) {
                    if (z == null) {
                        z = new float[nu * k];
                    }
                    int u = checkIndex(in.int4(), nu, "user", modelId);
                    in.float32s(z, u * k, k);
                }
            }
            if (z == null && "shared".equals(h.coupling())) {
                z = new float[nu * k];
            }
            return new ModelFactors(k, p, bu, knownUsers, q, bi, popularity, knownItems, z);
        });
    }

    // ---- internals ----------------------------------------------------------------------------

    private void promoteLocked(Connection c, long modelId) throws SQLException {
        lockPointer(c);
        ModelHeader h = lockedHeader(c, modelId);
        if (TRAINING.equals(h.status()) || FAILED.equals(h.status())) {
            throw new ModelStateException("model " + modelId + " is " + h.status() + " and cannot be promoted"
                    + (TRAINING.equals(h.status()) ? "; wait until its training finishes" : ""));
        }
        if (ACTIVE.equals(h.status())) {
            return;
        }
        Long current = null;
        try (Statement s = c.createStatement(); ResultSet rs = s.executeQuery("select model_id from active_model")) {
            if (rs.next()) {
                current = rs.getLong(1);
            }
        }
        try (PreparedStatement retire = c.prepareStatement("update models set status = 'retired' where id = ? and status = 'active'");
             PreparedStatement activate = c.prepareStatement("update models set status = 'active' where id = ?");
             PreparedStatement point = c.prepareStatement("insert into active_model (singleton, model_id, previous_model_id, changed_at)"
                     + " values (true, ?, ?, now()) on conflict (singleton) do update"
                     + " set model_id = excluded.model_id, previous_model_id = excluded.previous_model_id, changed_at = now()");
             PreparedStatement notify = c.prepareStatement("select pg_notify('" + NOTIFY_CHANNEL + "', ?)")) {
            if (current != null) {
                retire.setLong(1, current);
                retire.executeUpdate();
            }
            activate.setLong(1, modelId);
            activate.executeUpdate();
            point.setLong(1, modelId);
            if (current != null) {
                point.setLong(2, current);
            } else {
                point.setNull(2, java.sql.Types.BIGINT);
            }
            point.executeUpdate();
            notify.setString(1, Long.toString(modelId));
            notify.executeQuery().close();
        }
    }

    private static void dropFactors(Connection c, List<Long> modelIds) throws SQLException {
        if (modelIds.isEmpty()) {
            return;
        }
        Array ids = c.createArrayOf("int8", modelIds.toArray());
        for (String table : List.of("model_user_factors", "model_item_factors", "model_trust_factors")) {
            try (PreparedStatement ps = c.prepareStatement("delete from " + table + " where model_id = any (?)")) {
                ps.setArray(1, ids);
                ps.executeUpdate();
            }
        }
    }

    /** Serialises promotions and rollbacks (readers are not blocked). */
    private static void lockPointer(Connection c) throws SQLException {
        try (Statement s = c.createStatement()) {
            s.execute("lock table active_model in share row exclusive mode");
        }
    }

    private ModelHeader lockedHeader(Connection c, long modelId) throws SQLException {
        return find(c, modelId, true).orElseThrow(() -> new UnknownModelException(modelId));
    }

    private static Optional<ModelHeader> find(Connection c, long modelId, boolean forUpdate) throws SQLException {
        try (PreparedStatement ps = c.prepareStatement("select " + HEADER_COLUMNS + " from models where id = ?"
                + (forUpdate ? " for update" : ""))) {
            ps.setLong(1, modelId);
            try (ResultSet rs = ps.executeQuery()) {
                return rs.next() ? Optional.of(header(rs)) : Optional.empty();
            }
        }
    }

    private static ModelHeader header(ResultSet rs) throws SQLException {
        OffsetDateTime finished = rs.getObject(14, OffsetDateTime.class);
        return new ModelHeader(rs.getLong(1), rs.getString(2), rs.getInt(3), rs.getString(4), rs.getFloat(5), rs.getFloat(6),
                rs.getFloat(7), rs.getFloat(8), rs.getFloat(9), rs.getFloat(10), rs.getInt(11), rs.getInt(12),
                rs.getObject(13, OffsetDateTime.class).toInstant(), finished == null ? null : finished.toInstant(),
                rs.getString(15), rs.getString(16), rs.getString(17), rs.getString(18));
    }

    private static String prefixed(String alias) {
        StringBuilder out = new StringBuilder();
        for (String col : HEADER_COLUMNS.split(",\\s*")) {
            out.append(out.length() == 0 ? "" : ", ").append(alias).append('.').append(col);
        }
        return out.toString();
    }

    private static void requireShape(ModelHeader h, ModelFactors f) {
        int k = h.rank();
        String problem = null;
        if (f.rank() != k) {
            problem = "rank " + f.rank() + " but the version has rank " + k;
        } else if (f.userBias().length != h.numUsers() || f.userFactors().length != h.numUsers() * k) {
            problem = "user arrays sized for " + f.userBias().length + " users (" + f.userFactors().length
                    + " factor values) but the version has " + h.numUsers() + " users at rank " + k;
        } else if (f.itemBias().length != h.numItems() || f.itemFactors().length != h.numItems() * k
                || f.itemPopularity().length != h.numItems()) {
            problem = "item arrays sized for " + f.itemBias().length + " items but the version has " + h.numItems();
        } else if (f.trustFactors() != null && f.trustFactors().length != h.numUsers() * k) {
            problem = "trust factors hold " + f.trustFactors().length + " values, expected " + h.numUsers() * k;
        } else if (f.knownUsers().length() > h.numUsers() || f.knownItems().length() > h.numItems()) {
            problem = "known-row bits beyond the index space";
        }
        if (problem != null) {
            throw new IllegalArgumentException("factors do not fit model " + h.id() + ": " + problem);
        }
    }

    private static boolean nonZero(float[] a, int offset, int k) {
        for (int i = 0; i < k; i++) {
            if (a[offset + i] != 0f) {
                return true;
            }
        }
        return false;
    }

    private static int checkIndex(int idx, int size, String what, long modelId) throws SQLException {
        if (idx < 0 || idx >= size) {
            throw new SQLException("model " + modelId + " has a " + what + " factor row " + idx + " outside its index space 0.."
                    + (size - 1) + "; the stored version is inconsistent");
        }
        return idx;
    }

    private interface Work<T> {
        T run(Connection c) throws SQLException, IOException;
    }

    private <T> T inTransaction(String doing, Work<T> work) {
        try (Connection c = database.dataSource().getConnection()) {
            c.setAutoCommit(false);
            try {
                T result = work.run(c);
                c.commit();
                return result;
            } catch (SQLException | IOException | RuntimeException e) {
                try {
                    c.rollback();
                } catch (SQLException ignored) {
                    // broken connection; the pool discards it
                }
                throw e;
            }
        } catch (SQLException e) {
            String state = e.getSQLState() == null ? "" : e.getSQLState();
            if (state.startsWith("22") || state.startsWith("23")) {
                throw new IllegalArgumentException(doing + ": " + e.getMessage(), e);
            }
            throw SqlFailures.translate(e, doing, database.description());
        } catch (IOException e) {
            throw SqlFailures.translate(new SQLException(e.getMessage(), "08006", e), doing, database.description());
        }
    }
}
