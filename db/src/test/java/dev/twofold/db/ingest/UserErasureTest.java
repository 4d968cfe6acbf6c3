package dev.twofold.db.ingest;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.sql.Connection;
import java.sql.PreparedStatement;
import java.sql.ResultSet;
import java.sql.Statement;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.postgresql.PGConnection;
import org.postgresql.PGNotification;
import picocli.CommandLine;

/** Erasure as an auditor checks it: every table of the schema, every model version. */
class UserErasureTest {

    static final String SUBJECT = "cook-erasure-subject";
    static Database db;

    @BeforeAll
    static void open() {
        db = TestDatabases.fresh();
    }

    @AfterAll
    static void close() {
        db.close();
    }

    @Test
    void after_forget_no_table_and_no_model_version_holds_the_users_id_or_rows() throws Exception {
        RatingWriter writer = new RatingWriter(db, RatingScale.DEFAULT);
        writer.upsertRatings(List.of(new RatingInput(SUBJECT, "recipe-1", 4), new RatingInput(SUBJECT, "recipe-2", 5),
                new RatingInput("cook-other", "recipe-1", 3)));
        writer.upsertTrust(List.of(new TrustInput(SUBJECT, "cook-other"), new TrustInput("cook-other", SUBJECT, 0.5)));
        int subjectIdx = single("select idx from users where external_id = '" + SUBJECT + "'");
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement()) {
            for (int model = 0; model < 2; model++) {
                s.execute("insert into models (rank, coupling, lambda, trust_weight, trust_alpha, scale_min, scale_max,"
                        + " global_mean, num_users, num_items) values (1, 'shared', 0.1, 0.1, 1, 1, 5, 3, 2, 2)");
            }
            s.execute("insert into model_user_factors (model_id, user_idx, bias, factors)"
                    + " select m.id, u.idx, 0, '\\x0000803f'::bytea from models m cross join users u");
            s.execute("insert into model_trust_factors (model_id, user_idx, factors)"
                    + " select m.id, u.idx, '\\x0000803f'::bytea from models m cross join users u");
        }

        try (Connection listener = db.dataSource().getConnection()) {
            try (Statement s = listener.createStatement()) {
                s.execute("listen " + RatingWriter.ERASURE_CHANNEL);
            }
            StringWriter out = new StringWriter();
            int code = new CommandLine(new UsersCommand(TestDatabases.environment(db))).setOut(new PrintWriter(out))
                    .execute("forget", SUBJECT);
            assertEquals(0, code);
            assertTrue(out.toString().contains("erased user '" + SUBJECT + "'"));
            PGNotification[] notes = listener.unwrap(PGConnection.class).getNotifications(5_000);
            assertNotNull(notes, "running services are told");
            assertEquals(SUBJECT, notes[0].getParameter());
        }

        for (String table : tables()) {
            assertEquals(0, single("select count(*) from " + table + " t where t::text like '%" + SUBJECT + "%'"),
                    table + " still holds the id");
            for (String column : indexColumns(table)) {
                assertEquals(0, single("select count(*) from " + table + " where " + column + " = " + subjectIdx),
                        table + "." + column + " still holds the user's rows");
            }
        }
        assertEquals(1, single("select count(*) from ratings"), "other users keep their rows");
        assertEquals(2, single("select count(*) from model_user_factors"), "other users keep their factors in both versions");
    }

    @Test
    void forgetting_an_unknown_user_is_exit_65_and_changes_nothing() throws Exception {
        int before = single("select count(*) from users");
        StringWriter err = new StringWriter();
        CommandLine cli = new CommandLine(new UsersCommand(TestDatabases.environment(db))).setErr(new PrintWriter(err));
        cli.setExecutionExceptionHandler((e, cmd, parsed) -> e instanceof dev.twofold.db.TwofoldException t ? t.exitCode() : 1);
        assertEquals(65, cli.execute("forget", "cook-nobody-knows"));
        assertEquals(before, single("select count(*) from users"));
    }

    private static List<String> tables() throws Exception {
        List<String> tables = new ArrayList<>();
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement();
                ResultSet rs = s.executeQuery("select table_name from information_schema.tables"
                        + " where table_schema = current_schema() and table_type = 'BASE TABLE'"
                        + " and table_name <> 'flyway_schema_history'")) {
            while (rs.next()) {
                tables.add(rs.getString(1));
            }
        }
        assertTrue(tables.contains("ratings") && tables.contains("model_user_factors"), tables.toString());
        return tables;
    }

    /** Columns that hold a user index: named like user_idx, truster_idx, trustee_idx, or users.idx itself. */
    private static List<String> indexColumns(String table) throws Exception {
        List<String> columns = new ArrayList<>();
        try (Connection c = db.dataSource().getConnection(); PreparedStatement ps = c.prepareStatement(
                "select column_name from information_schema.columns where table_schema = current_schema()"
                        + " and table_name = ? and (column_name in ('user_idx', 'truster_idx', 'trustee_idx')"
                        + " or (? = 'users' and column_name = 'idx'))")) {
            ps.setString(1, table);
            ps.setString(2, table);
            try (ResultSet rs = ps.executeQuery()) {
                while (rs.next()) {
                    columns.add(rs.getString(1));
                }
            }
        }
        return columns;
    }

    private static int single(String sql) throws Exception {
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement();
                ResultSet rs = s.executeQuery(sql)) {
            rs.next();
            return rs.getInt(1);
        }
    }
}
