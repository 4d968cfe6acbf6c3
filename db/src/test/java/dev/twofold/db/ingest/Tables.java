package dev.twofold.db.ingest;

import dev.twofold.db.connect.Database;
import java.sql.Connection;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Statement;
import java.util.ArrayList;
import java.util.List;

/** Reads the stored rows back as readable strings, for exact comparisons in tests. */
final class Tables {

    private Tables() {
    }

    /** "user,item,rating[,time]" rows (time as epoch seconds when present), ordered by user and item id. */
    static List<String> ratings(Database db) throws SQLException {
        return rows(db, """
                select u.external_id || ',' || i.external_id || ',' || r.rating::text
                       || coalesce(',' || extract(epoch from r.rated_at)::bigint::text, '')
                from ratings r join users u on u.idx = r.user_idx join items i on i.idx = r.item_idx
                order by u.external_id, i.external_id""");
    }

    /** "truster,trustee,weight" rows. */
    static List<String> trust(Database db) throws SQLException {
        return rows(db, """
                select a.external_id || ',' || b.external_id || ',' || t.weight::text
                from trust t join users a on a.idx = t.truster_idx join users b on b.idx = t.trustee_idx
                order by a.external_id, b.external_id""");
    }

    static List<String> userIds(Database db) throws SQLException {
        return rows(db, "select external_id from users order by idx");
    }

    static List<String> itemIds(Database db) throws SQLException {
        return rows(db, "select external_id from items order by idx");
    }

    /** Row count and an md5 over every column of every row of the four data tables. */
    static String checksum(Database db) throws SQLException {
        return String.join(" ", rows(db, """
                select 'users:' || count(*) || ':' || coalesce(md5(string_agg(u::text, '|' order by idx)), '') from users u
                union all
                select 'items:' || count(*) || ':' || coalesce(md5(string_agg(i::text, '|' order by idx)), '') from items i
                union all
                select 'ratings:' || count(*) || ':' || coalesce(md5(string_agg(r::text, '|' order by user_idx, item_idx)), '') from ratings r
                union all
                select 'trust:' || count(*) || ':' || coalesce(md5(string_agg(t::text, '|' order by truster_idx, trustee_idx)), '') from trust t
                """));
    }

    static void clear(Database db) throws SQLException {
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement()) {
            s.execute("truncate ratings, trust, users, items restart identity cascade");
        }
    }

    static List<String> rows(Database db, String sql) throws SQLException {
        List<String> out = new ArrayList<>();
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement(); ResultSet rs = s.executeQuery(sql)) {
            while (rs.next()) {
                out.add(rs.getString(1));
            }
        }
        return out;
    }
}
