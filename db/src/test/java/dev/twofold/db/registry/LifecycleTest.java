package dev.twofold.db.registry;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.ConfigurationException;
import dev.twofold.db.TwofoldException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import java.sql.Connection;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Statement;
import java.util.ArrayList;
import java.util.BitSet;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;

/** The registry's lifecycle rules (orphans, guarded promotion, retention) and the retrain lock. */
class LifecycleTest {

    static Database db;
    ModelRegistry registry;

    @BeforeAll
    static void open() {
        db = TestDatabases.fresh();
    }

    @AfterAll
    static void close() {
        db.close();
    }

    @BeforeEach
    void empty() throws SQLException {
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement()) {
            s.execute("truncate active_model, model_user_factors, model_item_factors, model_trust_factors, models,"
                    + " retrain_holder restart identity cascade");
        }
        registry = new ModelRegistry(db);
    }

    // ---- the retrain lock ----------------------------------------------------------------------

    @Test
    void a_second_retrain_is_refused_at_once_with_exit_75_and_the_holder_named() {
        try (RetrainLock first = RetrainLock.acquire(db, "twofold train")) {
            RetrainLockedException e = assertThrows(RetrainLockedException.class,
                    () -> RetrainLock.acquire(db, "twofold train"));
            assertEquals(TwofoldException.EXIT_LOCKED, e.exitCode());
            RetrainLock.Holder holder = e.holder().orElseThrow();
            assertEquals(ProcessHandle.current().pid(), holder.processId());
            assertEquals(first.holder().host(), holder.host());
            assertEquals(first.holder().backendPid(), holder.backendPid());
            assertTrue(e.getMessage().contains("twofold train on host " + holder.host() + " (process "
                    + ProcessHandle.current().pid() + ")"), e.getMessage());
        }
    }

    @Test
    void the_lock_is_free_again_once_released_and_releasing_twice_is_harmless() throws SQLException {
        RetrainLock first = RetrainLock.acquire(db, "twofold train");
        first.close();
        first.close();
        assertEquals(0, count("select count(*) from retrain_holder"));
        try (RetrainLock second = RetrainLock.acquire(db, "twofold train")) {
            second.verifyHeld();
        }
    }

    @Test
    void a_holder_whose_session_dies_leaves_the_lock_free() throws SQLException {
        RetrainLock dead = RetrainLock.acquire(db, "twofold train");
        int backend = dead.holder().backendPid();
        // what kill -9 of the trainer amounts to for PostgreSQL: its session ends
        assertEquals(1, count("select pg_terminate_backend(" + backend + ")::int"));
        waitUntilGone(backend);
        assertThrows(TwofoldException.class, dead::verifyHeld);
        try (RetrainLock next = RetrainLock.acquire(db, "twofold train")) {
            next.verifyHeld();
        }
        dead.close();
    }

    @Test
    void a_stale_holder_row_is_not_believed_and_the_real_session_is_named() throws SQLException {
        try (Connection other = db.dataSource().getConnection(); Statement s = other.createStatement()) {
            s.execute("insert into retrain_holder (backend_pid, host, process_id, command) values (-1, 'gone-host', 1, 'twofold train')");
            s.execute("set application_name = 'a hand-held lock'");
            s.execute("select pg_advisory_lock(" + RetrainLock.KEY + ")");
            try {
                RetrainLockedException e = assertThrows(RetrainLockedException.class,
                        () -> RetrainLock.acquire(db, "twofold train"));
                assertTrue(e.getMessage().contains("application 'a hand-held lock'"), e.getMessage());
                assertFalse(e.getMessage().contains("gone-host"), e.getMessage());
            } finally {
                s.execute("select pg_advisory_unlock(" + RetrainLock.KEY + ")");
                s.execute("reset application_name");
            }
        }
    }

    // ---- orphans --------------------------------------------------------------------------------

    @Test
    void versions_left_training_by_a_dead_trainer_are_failed_by_the_next_lock_holder_and_lose_their_factors()
            throws SQLException {
        long live = finished("candidate");
        registry.promote(live);
        long orphanWithFactors = registry.create(ModelRegistryTest.draft(1, "none", 1, 1));
        registry.storeFactors(orphanWithFactors, tiny());
        long orphanBare = registry.create(ModelRegistryTest.draft(1, "none", 1, 1));

        List<Long> failed;
        try (RetrainLock lock = RetrainLock.acquire(db, "twofold train")) {
            failed = registry.failOrphans(lock);
        }
        assertEquals(List.of(orphanWithFactors, orphanBare), failed);
        for (long id : failed) {
            ModelHeader h = registry.find(id).orElseThrow();
            assertEquals("failed", h.status());
            assertEquals(ModelRegistry.ORPHAN_REASON, h.reason());
        }
        assertEquals(0, count("select count(*) from model_user_factors where model_id = " + orphanWithFactors));
        assertEquals(live, registry.active().orElseThrow().id());
    }

    @Test
    void orphans_cannot_be_failed_by_a_lock_that_is_no_longer_held() {
        long training = registry.create(ModelRegistryTest.draft(1, "none", 1, 1));
        RetrainLock lock = RetrainLock.acquire(db, "twofold train");
        lock.close();
        assertThrows(TwofoldException.class, () -> registry.failOrphans(lock));
        assertEquals("training", registry.find(training).orElseThrow().status());
    }

    // ---- guarded promotion ------------------------------------------------------------------------

    @Test
    void a_candidate_is_promoted_only_over_the_model_it_was_judged_against() {
        long first = finished("candidate");
        assertTrue(registry.promoteIfActive(first, null));
        long judgedAgainstFirst = finished("candidate");
        long byHand = finished("candidate");
        registry.promote(byHand); // someone promoted another model while the trainer was comparing

        assertFalse(registry.promoteIfActive(judgedAgainstFirst, first));
        assertEquals(byHand, registry.active().orElseThrow().id());
        assertEquals("candidate", registry.find(judgedAgainstFirst).orElseThrow().status());

        assertTrue(registry.promoteIfActive(judgedAgainstFirst, byHand));
        assertEquals(judgedAgainstFirst, registry.active().orElseThrow().id());
        assertEquals(Optional.of(byHand), registry.previous());
    }

    // ---- retention ------------------------------------------------------------------------------

    @Test
    void retention_keeps_the_newest_versions_and_always_the_active_and_rollback_ones() throws SQLException {
        List<Long> ids = new ArrayList<>();
        for (int i = 0; i < 8; i++) {
            ids.add(finished(i % 3 == 2 ? "rejected" : "candidate"));
        }
        registry.promote(ids.get(0));
        registry.promote(ids.get(1)); // active 1, previous 0
        long stillTraining = registry.create(ModelRegistryTest.draft(1, "none", 1, 1)); // newest of all

        List<Long> deleted = registry.retain(3);

        // kept: the 3 newest (training one, 7, 6), the active (1) and the rollback target (0)
        assertEquals(List.of(ids.get(2), ids.get(3), ids.get(4), ids.get(5)), deleted);
        List<Long> left = registry.list().stream().map(ModelHeader::id).toList();
        assertEquals(List.of(stillTraining, ids.get(7), ids.get(6), ids.get(1), ids.get(0)), left);
        assertEquals(0, count("select count(*) from model_user_factors where model_id = any (array"
                + deleted + "::bigint[])"));
        assertEquals(ids.get(1), registry.active().orElseThrow().id());
        assertEquals(ids.get(0), registry.rollback());

        assertEquals(List.of(), registry.retain(3), "nothing more to delete");
    }

    @Test
    void retention_counts_are_checked_and_read_from_the_environment() {
        assertEquals(Retention.DEFAULT_KEEP, Retention.fromEnvironment(Map.of()).keep());
        assertEquals(4, Retention.fromEnvironment(Map.of(Retention.ENV_KEEP, " 4 ")).keep());
        ConfigurationException e = assertThrows(ConfigurationException.class,
                () -> Retention.fromEnvironment(Map.of(Retention.ENV_KEEP, "0")));
        assertEquals("TWOFOLD_KEEP_MODELS=0 is outside the allowed range; allowed 1..10000 (default 10)", e.getMessage());
        assertThrows(ConfigurationException.class, () -> Retention.fromEnvironment(Map.of(Retention.ENV_KEEP, "ten")));
        assertThrows(IllegalArgumentException.class, () -> registry.retain(0));
    }

    // ---- helpers ----------------------------------------------------------------------------------

    private long finished(String status) {
        long id = registry.create(ModelRegistryTest.draft(1, "none", 1, 1));
        registry.storeFactors(id, tiny());
        registry.finish(id, status, null, null);
        return id;
    }

    private static ModelFactors tiny() {
        BitSet one = new BitSet();
        one.set(0);
        return new ModelFactors(1, new float[] {0.5f}, new float[] {0.1f}, one, new float[] {0.25f}, new float[] {0.2f},
                new float[] {1f}, one, null);
    }

    private static long count(String sql) throws SQLException {
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement(); ResultSet rs = s.executeQuery(sql)) {
            rs.next();
            return rs.getLong(1);
        }
    }

    /** Terminating a backend returns before the session is fully gone; wait until PostgreSQL no longer lists it. */
    private static void waitUntilGone(int backend) throws SQLException {
        for (int i = 0; i < 200 && count("select count(*) from pg_stat_activity where pid = " + backend) > 0; i++) {
            try {
                Thread.sleep(25);
            } catch (InterruptedException e) {
                Thread.currentThread().interrupt();
                return;
            }
        }
    }
}
