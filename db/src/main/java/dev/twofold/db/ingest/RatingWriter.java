package dev.twofold.db.ingest;

import dev.twofold.db.BadInputException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.internal.SqlFailures;
import java.sql.Array;
import java.sql.Connection;
import java.sql.PreparedStatement;
import java.sql.SQLException;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.TreeSet;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Small batches from the product backend (the HTTP service's {@code POST /v1/ratings} and
 * {@code POST /v1/trust}): the same checks as the file importer, problems reported as
 * {@code [index]: reason}, and the whole batch written in one transaction that is committed before
 * the method returns. Duplicates in a batch and against stored rows follow the importer's rule
 * (see {@link Importer}): applied in order, a rating replaces the current one unless both have a
 * time and it is older.
 */
public final class RatingWriter {

    /** NOTIFY channel on which an erasure is announced; the payload is the erased external user id. */
    public static final String ERASURE_CHANNEL = "twofold_erasures";

    private static final Logger AUDIT = LoggerFactory.getLogger("dev.twofold.audit");

    /** The largest batch accepted (the HTTP contract's limit). */
    public static final int MAX_BATCH_ROWS = 10_000;

    private final Database database;
    private final RatingScale scale;

    public RatingWriter(Database database, RatingScale scale) {
        this.database = database;
        this.scale = scale;
    }

    /** @throws BadInputException when any row is invalid; nothing is written */
    public WriteReport upsertRatings(List<RatingInput> rows) {
        requireSize(rows);
        Problems problems = new Problems();
        Map<String, Checked> latest = new LinkedHashMap<>();
        for (int i = 0; i < rows.size(); i++) {
            RatingInput r = rows.get(i);
            try {
                if (r == null) {
                    throw new FieldRules.Refused("row is missing");
                }
                FieldRules.id("user", r.user());
                FieldRules.id("item", r.item());
                float rating = FieldRules.rating(r.rating(), scale);
                long us = FieldRules.timeMicros(r.time());
                Checked incoming = new Checked(r.user(), r.item(), rating, us);
                latest.merge(r.user() + '\0' + r.item(), incoming, (current, next) -> next.replaces(current) ? next : current);
            } catch (FieldRules.Refused e) {
                problems.add("[" + i + "]", e.getMessage());
            }
        }
        if (problems.any()) {
            throw problems.refuse("ratings batch");
        }
        int n = latest.size();
        String[] users = new String[n];
        String[] items = new String[n];
        Float[] ratings = new Float[n];
        Long[] micros = new Long[n];
        int k = 0;
        for (Checked c : latest.values()) {
            users[k] = c.user;
            items[k] = c.item;
            ratings[k] = c.rating;
            micros[k] = c.micros == FieldRules.NO_TIME ? null : c.micros;
            k++;
        }
        return inTransaction("writing a ratings batch", c -> {
            int newUsers = insertIds(c, "users", users);
            int newItems = insertIds(c, "items", items);
            try (PreparedStatement ps = c.prepareStatement("""
                    insert into ratings (user_idx, item_idx, rating, rated_at)
                    select u.idx, i.idx, r.rating,
                           timestamptz 'epoch' + r.us * interval '1 microsecond'
                    from unnest(?::text[], ?::text[], ?::real[], ?::int8[]) as r(user_id, item_id, rating, us)
                    join users u on u.external_id = r.user_id
                    join items i on i.external_id = r.item_id
                    order by u.idx, i.idx
                    on conflict (user_idx, item_idx) do update
                       set rating = excluded.rating, rated_at = excluded.rated_at, updated_at = now()
                       where (ratings.rating, ratings.rated_at) is distinct from (excluded.rating, excluded.rated_at)
                         and not (ratings.rated_at is not null and excluded.rated_at is not null
                                  and excluded.rated_at < ratings.rated_at)""")) {
                ps.setArray(1, c.createArrayOf("text", users));
                ps.setArray(2, c.createArrayOf("text", items));
                ps.setArray(3, c.createArrayOf("float4", ratings));
                ps.setArray(4, c.createArrayOf("int8", micros));
                int written = ps.executeUpdate();
                return new WriteReport(rows.size(), written, newUsers, newItems);
            }
        });
    }

    /** @throws BadInputException when any row is invalid; nothing is written */
    public WriteReport upsertTrust(List<TrustInput> rows) {
        requireSize(rows);
        Problems problems = new Problems();
        Map<String, TrustInput> latest = new LinkedHashMap<>();
        Map<String, Float> weights = new LinkedHashMap<>();
        for (int i = 0; i < rows.size(); i++) {
            TrustInput t = rows.get(i);
            try {
                if (t == null) {
                    throw new FieldRules.Refused("row is missing");
                }
                FieldRules.id("truster", t.truster());
                FieldRules.id("trustee", t.trustee());
                FieldRules.notSelfTrust(t.truster(), t.trustee());
                float w = FieldRules.weight(t.weight());
                String key = t.truster() + '\0' + t.trustee();
                latest.remove(key); // the later row wins
                latest.put(key, t);
                weights.put(key, w);
            } catch (FieldRules.Refused e) {
                problems.add("[" + i + "]", e.getMessage());
            }
        }
        if (problems.any()) {
            throw problems.refuse("trust batch");
        }
        int n = latest.size();
        String[] trusters = new String[n];
        String[] trustees = new String[n];
        Float[] w = new Float[n];
        int k = 0;
        for (Map.Entry<String, TrustInput> e : latest.entrySet()) {
            trusters[k] = e.getValue().truster();
            trustees[k] = e.getValue().trustee();
            w[k] = weights.get(e.getKey());
            k++;
        }
        String[] everyone = new String[2 * n];
        System.arraycopy(trusters, 0, everyone, 0, n);
        System.arraycopy(trustees, 0, everyone, n, n);
        return inTransaction("writing a trust batch", c -> {
            int newUsers = insertIds(c, "users", everyone);
            try (PreparedStatement ps = c.prepareStatement("""
                    insert into trust (truster_idx, trustee_idx, weight)
                    select a.idx, b.idx, t.weight
                    from unnest(?::text[], ?::text[], ?::real[]) as t(truster, trustee, weight)
                    join users a on a.external_id = t.truster
                    join users b on b.external_id = t.trustee
                    order by a.idx, b.idx
                    on conflict (truster_idx, trustee_idx) do update
                       set weight = excluded.weight, updated_at = now()
                       where trust.weight is distinct from excluded.weight""")) {
                ps.setArray(1, c.createArrayOf("text", trusters));
                ps.setArray(2, c.createArrayOf("text", trustees));
                ps.setArray(3, c.createArrayOf("float4", w));
                int written = ps.executeUpdate();
                return new WriteReport(rows.size(), written, newUsers, 0);
            }
        });
    }

    /**
     * Erases a user everywhere: ratings, trust edges in both directions, factor rows in every stored
     * model version, and the id itself (its index is never reused). One transaction, committed
     * before returning; running services are told on {@value #ERASURE_CHANNEL} (payload: the
     * external id) so they drop the user from memory. An audit line records the erasure and how
     * many rows went, never the rows themselves.
     *
     * @return false when no user has this id (nothing to erase)
     */
    public boolean forgetUser(String externalId) {
        try {
            FieldRules.id("user", externalId);
        } catch (FieldRules.Refused r) {
            throw new BadInputException(r.getMessage());
        }
        long[] removed = inTransaction("erasing a user", c -> {
            Integer idx = null;
            // Deleting the id first locks it like SELECT ... FOR UPDATE would, and needs only the DELETE
            // privilege (the service's database role may not update users).
            try (PreparedStatement ps = c.prepareStatement("delete from users where external_id = ? returning idx")) {
                ps.setString(1, externalId);
                try (var rs = ps.executeQuery()) {
                    if (rs.next()) {
                        idx = rs.getInt(1);
                    }
                }
            }
            if (idx == null) {
                return null;
            }
            List<String> deletes = List.of(
                    "delete from ratings where user_idx = ?",
                    "delete from trust where truster_idx = ? or trustee_idx = ?",
                    "delete from model_user_factors where user_idx = ?",
                    "delete from model_trust_factors where user_idx = ?");
            long[] counts = new long[deletes.size()];
            for (int d = 0; d < deletes.size(); d++) {
                try (PreparedStatement ps = c.prepareStatement(deletes.get(d))) {
                    for (int p = 1; p <= ps.getParameterMetaData().getParameterCount(); p++) {
                        ps.setInt(p, idx);
                    }
                    counts[d] = ps.executeUpdate();
                }
            }
            try (PreparedStatement ps = c.prepareStatement("select pg_notify(?, ?)")) {
                ps.setString(1, ERASURE_CHANNEL);
                ps.setString(2, externalId);
                ps.execute();
            }
            return counts;
        });
        if (removed == null) {
            AUDIT.info("erasure requested for unknown user '{}': nothing stored", externalId);
            return false;
        }
        AUDIT.info("erased user '{}': {} ratings, {} trust edges, {} user factor rows, {} trust factor rows",
                externalId, removed[0], removed[1], removed[2], removed[3]);
        return true;
    }

    /** Inserts the ids not yet known, in sorted order (so concurrent writers lock in the same order); returns how many. */
    private static int insertIds(Connection c, String table, String[] ids) throws SQLException {
        String[] distinct = new TreeSet<>(List.of(ids)).toArray(String[]::new);
        try (PreparedStatement ps = c.prepareStatement("insert into " + table + " (external_id)"
                + " select n.id from unnest(?::text[]) as n(id)"
                + " where not exists (select 1 from " + table + " t where t.external_id = n.id)"
                + " order by n.id on conflict (external_id) do nothing")) {
            Array array = c.createArrayOf("text", distinct);
            ps.setArray(1, array);
            return ps.executeUpdate();
        }
    }

    private static void requireSize(List<?> rows) {
        if (rows == null || rows.isEmpty()) {
            throw new BadInputException("[]: the batch is empty");
        }
        if (rows.size() > MAX_BATCH_ROWS) {
            throw new BadInputException("[]: the batch has " + rows.size() + " rows; at most " + MAX_BATCH_ROWS + " are accepted");
        }
    }

    private interface Work<T> {
        T run(Connection c) throws SQLException;
    }

    private <T> T inTransaction(String doing, Work<T> work) {
        try (Connection c = database.dataSource().getConnection()) {
            c.setAutoCommit(false);
            try {
                T result = work.run(c);
                c.commit();
                return result;
            } catch (SQLException | RuntimeException e) {
                try {
                    c.rollback();
                } catch (SQLException ignored) {
                    // the connection is broken; the pool discards it
                }
                throw e;
            }
        } catch (SQLException e) {
            throw SqlFailures.translate(e, doing, database.description());
        }
    }

    /** A checked rating; {@link #replaces} is the one rule for which of two ratings of a pair wins. */
    private record Checked(String user, String item, float rating, long micros) {
        boolean replaces(Checked current) {
            return micros == FieldRules.NO_TIME || current.micros == FieldRules.NO_TIME || micros >= current.micros;
        }
    }

}
