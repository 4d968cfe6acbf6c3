package dev.twofold.db.access;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.BadInputException;
import dev.twofold.db.DatabaseFailureException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import dev.twofold.db.ingest.Importer;
import dev.twofold.db.ingest.RatingInput;
import dev.twofold.db.ingest.RatingScale;
import dev.twofold.db.ingest.RatingWriter;
import dev.twofold.db.ingest.TrustInput;
import dev.twofold.db.ingest.WriteReport;
import dev.twofold.db.registry.ModelFactors;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.db.registry.RetrainLock;
import dev.twofold.db.snapshot.HistoryReader;
import dev.twofold.db.snapshot.Snapshot;
import dev.twofold.db.snapshot.UserHistory;
import dev.twofold.db.snapshot.SnapshotReader;
import dev.twofold.db.testing.TestDatabases;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Statement;
import java.time.Instant;
import java.util.ArrayList;
import java.util.BitSet;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The least-privilege roles on a real PostgreSQL: the service and the trainer, connected as their
 * roles, do their real work through Twofold's own classes, and PostgreSQL refuses them what they
 * must not do. The roles get names of their own (roles are shared by every database of a server)
 * and are dropped at the end.
 */
class DatabaseRolesTest {

    private static final String PASSWORD = "roles-test-password";
    /** PostgreSQL's SQLSTATE for "insufficient privilege" (PostgreSQL manual, Appendix A, class 42). */
    private static final String INSUFFICIENT_PRIVILEGE = "42501";
    private static final int K = 2;

    @TempDir
    static Path dir;
    static Database owner;
    static Database service;
    static Database trainer;
    static String serviceRole;
    static String trainerRole;
    static long activeModel;

    @BeforeAll
    static void grantAndConnect() throws Exception {
        owner = TestDatabases.fresh();
        String suffix = ProcessHandle.current().pid() + "_" + System.nanoTime() % 1_000_000;
        serviceRole = "tf_service_" + suffix;
        trainerRole = "tf_trainer_" + suffix;
        DatabaseRoles.apply(owner, serviceRole, trainerRole);
        DatabaseRoles.apply(owner, serviceRole, trainerRole); // a second run changes nothing and fails on nothing
        execute(owner, "alter role " + serviceRole + " login password '" + PASSWORD + "'");
        execute(owner, "alter role " + trainerRole + " login password '" + PASSWORD + "'");

        Path ratings = Files.writeString(dir.resolve("ratings.csv"), """
                user,item,rating
                ana,soup,5
                ana,stew,4
                ben,soup,2
                ben,tart,4
                cy,stew,3
                """);
        Path trust = Files.writeString(dir.resolve("trust.csv"), """
                truster,trustee
                ana,ben
                cy,ana
                """);
        new Importer(owner, RatingScale.DEFAULT).importFiles(ratings, trust);
        ModelRegistry registry = new ModelRegistry(owner);
        activeModel = publish(registry, 3, 3);
        new ApiKeys(owner).create("product-backend", KeyRole.WRITE);

        String url = TestDatabases.environment(owner).get(DatabaseSettings.ENV_URL);
        // Opening runs the schema check (Flyway) as the role: an up-to-date schema needs only reading.
        service = Database.open(new DatabaseSettings(url, serviceRole, PASSWORD, dir, 2));
        trainer = Database.open(new DatabaseSettings(url, trainerRole, PASSWORD, dir, 3));
    }

    @AfterAll
    static void dropRoles() throws SQLException {
        if (service != null) {
            service.close();
        }
        if (trainer != null) {
            trainer.close();
        }
        if (owner != null) {
            execute(owner, "drop owned by " + serviceRole + ", " + trainerRole);
            execute(owner, "drop role " + serviceRole);
            execute(owner, "drop role " + trainerRole);
            owner.close();
        }
    }

    @Test
    void the_service_role_loads_the_active_model_writes_ratings_and_trust_and_forgets_a_user() {
        ModelRegistry registry = new ModelRegistry(service);
        ModelHeader active = registry.active().orElseThrow();
        assertEquals(activeModel, active.id());
        ModelFactors factors = registry.loadFactors(active.id());
        assertEquals(K, factors.rank());
        assertEquals(3, factors.knownUsers().cardinality(), "every user row came back");

        RatingWriter writer = new RatingWriter(service, RatingScale.DEFAULT);
        WriteReport rated = writer.upsertRatings(List.of(new RatingInput("dee", "pie", 4.0, Instant.parse("2026-05-01T18:30:00Z")),
                new RatingInput("ana", "soup", 3.0, null)));
        assertEquals(2, rated.written());
        assertEquals(1, rated.newUsers());
        assertEquals(1, rated.newItems());
        assertEquals(1, writer.upsertTrust(List.of(new TrustInput("dee", "ana", 0.5))).written());
        UserHistory dee = new HistoryReader(service).read(List.of("dee")).get(0);
        assertEquals(1, dee.numRatings(), "fold-in reads the new rating");
        assertEquals(1, dee.numTrustEdges(), "and the new trust edge");

        List<ApiKeys.LiveKey> keys = new ApiKeys(service).live();
        assertEquals(1, keys.size());
        new ApiKeys(service).recordUse(Map.of(keys.get(0).id(), Instant.now()));

        long cy = count(owner, "select idx from users where external_id = 'cy'");
        assertTrue(count(owner, "select count(*) from model_user_factors where user_idx = " + cy) > 0);
        assertTrue(writer.forgetUser("cy"));
        assertEquals(0, count(owner, "select count(*) from users where external_id = 'cy'"));
        assertEquals(0, count(owner, "select count(*) from ratings where user_idx = " + cy));
        assertEquals(0, count(owner, "select count(*) from trust where truster_idx = " + cy + " or trustee_idx = " + cy));
        assertEquals(0, count(owner, "select count(*) from model_user_factors where user_idx = " + cy));
    }

    @Test
    void the_service_role_moves_the_active_pointer_for_the_admin_routes() {
        long candidate = candidateFromTheTrainer();
        ModelRegistry registry = new ModelRegistry(service);
        registry.promote(candidate);
        assertEquals(candidate, registry.active().orElseThrow().id());
        assertEquals(activeModel, registry.rollback());
        assertEquals(activeModel, registry.active().orElseThrow().id());
    }

    @Test
    void the_service_role_is_refused_schema_changes_factor_writes_model_deletion_and_key_changes() {
        for (String sql : List.of(
                "drop table ratings",
                "truncate ratings",
                "alter table users add column note text",
                "create table notes (id integer)",
                "insert into model_item_factors (model_id, item_idx, bias, popularity, factors) values (1, 99, 0, 0, ''::bytea)",
                "insert into model_user_factors (model_id, user_idx, bias, factors) values (1, 99, 0, ''::bytea)",
                "update model_user_factors set bias = 0",
                "update model_item_factors set bias = 0",
                "delete from models",
                "delete from model_item_factors",
                "update models set metrics = '{}'",
                "insert into models (rank, coupling, lambda, trust_weight, trust_alpha, scale_min, scale_max, global_mean,"
                        + " num_users, num_items) values (1, 'none', 0, 0, 0, 1, 5, 3, 0, 0)",
                "update api_keys set revoked_at = null",
                "update api_keys set role = 'admin'",
                "insert into api_keys (name, role, key_hash, shown) values ('x', 'admin', decode(repeat('00', 32), 'hex'), 'tf_')",
                "delete from api_keys",
                "delete from retrain_holder",
                "update items set external_id = 'renamed'")) {
            assertRefused(service, sql);
        }
        long candidate = candidateFromTheTrainer();
        long factorRows = count(owner, "select count(*) from model_item_factors where model_id = " + candidate);
        ModelRegistry registry = new ModelRegistry(service);
        assertThrows(DatabaseFailureException.class, () -> registry.delete(candidate));
        assertEquals(factorRows, count(owner, "select count(*) from model_item_factors where model_id = " + candidate));
        assertEquals(1, count(owner, "select count(*) from models where id = " + candidate), "the refused deletion left it whole");
        assertThrows(DatabaseFailureException.class, () -> registry.create(draft(3, 3)));
        assertThrows(DatabaseFailureException.class, () -> registry.retain(1));
        assertThrows(DatabaseFailureException.class, () -> new ApiKeys(service).create("intruder", KeyRole.ADMIN));
        assertThrows(DatabaseFailureException.class, () -> new ApiKeys(service).revoke("product-backend"));
        assertThrows(DatabaseFailureException.class, () -> RetrainLock.acquire(service, "not a trainer").close());
    }

    @Test
    void the_trainer_role_reads_a_snapshot_and_publishes_a_model_under_the_retrain_lock() {
        Snapshot snapshot = new SnapshotReader(trainer).read();
        assertTrue(snapshot.numRatings() >= 5, "the snapshot has the imported ratings");
        ModelRegistry registry = new ModelRegistry(trainer);
        long id;
        try (RetrainLock lock = RetrainLock.acquire(trainer, "roles test")) {
            registry.failOrphans(lock);
            id = publishCandidate(registry);
            assertTrue(registry.promoteIfActive(id, registry.active().map(ModelHeader::id).orElse(null)));
        }
        assertEquals(id, registry.active().orElseThrow().id());
        assertEquals(List.of(), registry.retain(50), "retention runs (nothing old enough to delete)");
        assertEquals(activeModel, registry.rollback(), "back to the model the other tests expect");
    }

    @Test
    void the_trainer_role_is_refused_personal_data_writes_keys_and_schema_changes() {
        for (String sql : List.of(
                "drop table models",
                "truncate ratings",
                "insert into ratings (user_idx, item_idx, rating) values (0, 0, 3)",
                "update ratings set rating = 1",
                "delete from ratings",
                "delete from trust",
                "insert into users (external_id) values ('intruder')",
                "delete from users",
                "select key_hash from api_keys",
                "update api_keys set last_used_at = now()",
                "create table notes (id integer)")) {
            assertRefused(trainer, sql);
        }
        assertThrows(DatabaseFailureException.class, () -> new RatingWriter(trainer, RatingScale.DEFAULT)
                .upsertRatings(List.of(new RatingInput("ana", "pie", 5.0, null))));
        assertThrows(DatabaseFailureException.class, () -> new RatingWriter(trainer, RatingScale.DEFAULT).forgetUser("ana"));
        assertThrows(DatabaseFailureException.class, () -> new ApiKeys(trainer).list());
    }

    /** Each table of the schema, with what each role may do there: a new table fails here until someone decides. */
    @Test
    void every_table_of_the_schema_has_a_decided_privilege_set_for_both_roles() throws SQLException {
        Map<String, String> serviceExpected = new TreeMap<>(Map.ofEntries(
                Map.entry("users", "select insert delete"), Map.entry("items", "select insert"),
                Map.entry("ratings", "select insert update delete"), Map.entry("trust", "select insert update delete"),
                Map.entry("models", "select update"), Map.entry("active_model", "select insert update"),
                Map.entry("model_user_factors", "select delete"), Map.entry("model_trust_factors", "select delete"),
                Map.entry("model_item_factors", "select"), Map.entry("api_keys", "select update"),
                Map.entry("retrain_holder", ""), Map.entry("flyway_schema_history", "select")));
        Map<String, String> trainerExpected = new TreeMap<>(Map.ofEntries(
                Map.entry("users", "select"), Map.entry("items", "select"), Map.entry("ratings", "select"),
                Map.entry("trust", "select"), Map.entry("models", "select insert update delete"),
                Map.entry("active_model", "select insert update"),
                Map.entry("model_user_factors", "select insert update delete"),
                Map.entry("model_trust_factors", "select insert update delete"),
                Map.entry("model_item_factors", "select insert update delete"), Map.entry("api_keys", ""),
                Map.entry("retrain_holder", "select insert update delete"), Map.entry("flyway_schema_history", "select")));
        assertEquals(serviceExpected, privileges(serviceRole));
        assertEquals(trainerExpected, privileges(trainerRole));
    }

    @Test
    void role_names_that_are_not_plain_identifiers_are_refused_before_any_sql() {
        assertThrows(BadInputException.class, () -> DatabaseRoles.sql("svc; drop table ratings", "trainer"));
        assertThrows(BadInputException.class, () -> DatabaseRoles.sql("Service", "trainer"));
        assertThrows(BadInputException.class, () -> DatabaseRoles.sql("same", "same"));
        String sql = DatabaseRoles.sql("svc", "trn");
        assertFalse(sql.contains("${"), "every placeholder is filled");
    }

    /** For each table of the public schema, the privileges the role holds (table-wide or on some column). */
    private static Map<String, String> privileges(String role) throws SQLException {
        Map<String, String> out = new TreeMap<>();
        try (Connection c = owner.dataSource().getConnection(); Statement s = c.createStatement();
             ResultSet rs = s.executeQuery("select tablename from pg_tables where schemaname = 'public'")) {
            List<String> tables = new ArrayList<>();
            while (rs.next()) {
                tables.add(rs.getString(1));
            }
            for (String table : tables) {
                List<String> held = new ArrayList<>();
                for (String privilege : List.of("select", "insert", "update", "delete", "truncate", "references", "trigger")) {
                    String column = List.of("select", "insert", "update").contains(privilege)
                            ? " or has_any_column_privilege('" + role + "', 'public." + table + "', '" + privilege + "')" : "";
                    try (ResultSet p = s.executeQuery("select has_table_privilege('" + role + "', 'public." + table + "', '"
                            + privilege + "')" + column)) {
                        p.next();
                        if (p.getBoolean(1)) {
                            held.add(privilege);
                        }
                    }
                }
                out.put(table, String.join(" ", held));
            }
        }
        return out;
    }

    private static void assertRefused(Database as, String sql) {
        SQLException refused = assertThrows(SQLException.class, () -> execute(as, sql), sql);
        assertEquals(INSUFFICIENT_PRIVILEGE, refused.getSQLState(), sql + ": " + refused.getMessage());
    }

    private static void execute(Database db, String sql) throws SQLException {
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement()) {
            s.execute(sql);
        }
    }

    private static long count(Database db, String sql) {
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement(); ResultSet rs = s.executeQuery(sql)) {
            rs.next();
            return rs.getLong(1);
        } catch (SQLException e) {
            throw new IllegalStateException(e);
        }
    }

    private static ModelHeader draft(int users, int items) {
        return new ModelHeader(0, "ignored", K, "none", 0.05f, 0f, 0f, 1f, 5f, 3.6f, users, items, null, null, "{}", null,
                "{}", null);
    }

    /** A candidate published as the trainer does it: under the retrain lock, as the trainer role. */
    private static long candidateFromTheTrainer() {
        try (RetrainLock lock = RetrainLock.acquire(trainer, "roles test")) {
            lock.verifyHeld();
            return publishCandidate(new ModelRegistry(trainer));
        }
    }

    /** A version with a factor row for every user and item, finished as a candidate; returns its id. */
    private static long publishCandidate(ModelRegistry registry) {
        long users = count(owner, "select coalesce(max(idx), -1) + 1 from users");
        long items = count(owner, "select coalesce(max(idx), -1) + 1 from items");
        int nu = (int) users;
        int ni = (int) items;
        long id = registry.create(draft(nu, ni));
        float[] p = new float[nu * K];
        float[] q = new float[ni * K];
        java.util.Arrays.fill(p, 0.5f);
        java.util.Arrays.fill(q, 0.25f);
        BitSet knownUsers = new BitSet();
        knownUsers.set(0, nu);
        BitSet knownItems = new BitSet();
        knownItems.set(0, ni);
        registry.storeFactors(id, new ModelFactors(K, p, new float[nu], knownUsers, q, new float[ni], new float[ni], knownItems,
                null));
        registry.finish(id, ModelRegistry.CANDIDATE, "{}", null);
        return id;
    }

    private static long publish(ModelRegistry registry, int users, int items) {
        long id = publishCandidate(registry);
        assertEquals(users, count(owner, "select count(*) from users"));
        assertEquals(items, count(owner, "select count(*) from items"));
        registry.promote(id);
        return id;
    }
}
