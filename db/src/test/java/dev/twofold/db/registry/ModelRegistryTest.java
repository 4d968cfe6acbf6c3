package dev.twofold.db.registry;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import java.sql.Connection;
import java.sql.SQLException;
import java.sql.Statement;
import java.time.Instant;
import java.util.BitSet;
import java.util.List;
import java.util.Optional;
import java.util.SplittableRandom;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.postgresql.PGConnection;
import org.postgresql.PGNotification;

class ModelRegistryTest {

    static final long SEED = 7L;
    /** How long to wait for a notification that must arrive. */
    static final int NOTIFY_WAIT_MS = 10_000;

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
            s.execute("truncate active_model, model_user_factors, model_item_factors, model_trust_factors, models restart identity cascade");
        }
        registry = new ModelRegistry(db);
    }

    static ModelHeader draft(int rank, String coupling, int users, int items) {
        return new ModelHeader(0, "ignored", rank, coupling, 0.05f, 0.5f, 10f, 1f, 5f, 3.6f, users, items, null, null,
                "{\"rank\":" + rank + ",\"epochs\":15}", null, "{\"ratings\":1000}", null);
    }

    @Test
    void a_created_version_is_training_and_keeps_every_field() {
        Instant before = Instant.now().minusSeconds(60);
        long id = registry.create(draft(8, "shared", 30, 20));
        ModelHeader h = registry.find(id).orElseThrow();
        assertEquals(id, h.id());
        assertEquals("training", h.status());
        assertEquals(8, h.rank());
        assertEquals("shared", h.coupling());
        assertEquals(0.05f, h.lambda());
        assertEquals(0.5f, h.trustWeight());
        assertEquals(10f, h.trustAlpha());
        assertEquals(1f, h.scaleMin());
        assertEquals(5f, h.scaleMax());
        assertEquals(3.6f, h.globalMean());
        assertEquals(30, h.numUsers());
        assertEquals(20, h.numItems());
        assertTrue(h.createdAt().isAfter(before));
        assertNull(h.finishedAt());
        assertEquals("{\"rank\": 8, \"epochs\": 15}", h.paramsJson(), "stored as jsonb, printed in its canonical form");
        assertEquals("{}", h.metricsJson());
        assertEquals("{\"ratings\": 1000}", h.countsJson());
        assertNull(h.reason());
    }

    @Test
    void a_coupling_outside_the_known_ones_is_refused() {
        assertThrows(IllegalArgumentException.class, () -> registry.create(draft(8, "mystery", 3, 3)));
    }

    @Test
    void factors_round_trip_exactly_with_their_known_rows() {
        int k = 5;
        int users = 40;
        int items = 25;
        long id = registry.create(draft(k, "shared", users, items));
        SplittableRandom random = new SplittableRandom(SEED);
        BitSet knownUsers = new BitSet();
        BitSet knownItems = new BitSet();
        float[] p = new float[users * k];
        float[] bu = new float[users];
        float[] z = new float[users * k];
        for (int u = 0; u < users; u++) {
            if (u % 3 != 0) {
                knownUsers.set(u);
                bu[u] = (float) random.nextGaussian();
                for (int f = 0; f < k; f++) {
                    p[u * k + f] = (float) random.nextGaussian();
                }
            }
            if (u % 4 != 1) {
                for (int f = 0; f < k; f++) {
                    z[u * k + f] = (float) random.nextGaussian();
                }
            }
        }
        p[k + 1] = -0.0f;               // user 1 is known: sign of zero survives
        p[k + 2] = Float.MIN_VALUE;     // subnormal
        p[k + 3] = Float.MAX_VALUE;
        float[] q = new float[items * k];
        float[] bi = new float[items];
        float[] pop = new float[items];
        for (int i = 0; i < items; i++) {
            if (i != 7) {
                knownItems.set(i);
                bi[i] = (float) random.nextGaussian();
                pop[i] = i * 0.125f;
                for (int f = 0; f < k; f++) {
                    q[i * k + f] = (float) random.nextGaussian();
                }
            }
        }
        ModelFactors stored = new ModelFactors(k, p, bu, knownUsers, q, bi, pop, knownItems, z);
        registry.storeFactors(id, stored);

        ModelFactors loaded = registry.loadFactors(id);
        assertEquals(k, loaded.rank());
        assertEquals(knownUsers, loaded.knownUsers());
        assertEquals(knownItems, loaded.knownItems());
        assertArrayEquals(p, loaded.userFactors());          // exact, bit for bit (assertArrayEquals compares floatToIntBits)
        assertArrayEquals(bu, loaded.userBias());
        assertArrayEquals(q, loaded.itemFactors());
        assertArrayEquals(bi, loaded.itemBias());
        assertArrayEquals(pop, loaded.itemPopularity());
        assertArrayEquals(z, loaded.trustFactors());
        assertEquals(Float.floatToRawIntBits(-0.0f), Float.floatToRawIntBits(loaded.userFactors()[k + 1]));
    }

    @Test
    void unknown_rows_are_not_stored_and_come_back_as_zero() throws SQLException {
        int k = 2;
        long id = registry.create(draft(k, "none", 3, 2));
        BitSet knownUsers = new BitSet();
        knownUsers.set(1);
        BitSet knownItems = new BitSet();
        knownItems.set(0);
        float[] p = {9f, 9f, 1f, 2f, 9f, 9f}; // rows 0 and 2 are not known: not stored
        registry.storeFactors(id, new ModelFactors(k, p, new float[] {7f, 0.5f, 7f}, knownUsers, new float[] {3f, 4f, 8f, 8f},
                new float[] {0.25f, 7f}, new float[] {2f, 7f}, knownItems, null));
        ModelFactors loaded = registry.loadFactors(id);
        assertArrayEquals(new float[] {0f, 0f, 1f, 2f, 0f, 0f}, loaded.userFactors());
        assertArrayEquals(new float[] {0f, 0.5f, 0f}, loaded.userBias());
        assertArrayEquals(new float[] {3f, 4f, 0f, 0f}, loaded.itemFactors());
        assertArrayEquals(new float[] {2f, 0f}, loaded.itemPopularity());
        assertNull(loaded.trustFactors(), "no trust factors without the shared coupling");
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement();
             var rs = s.executeQuery("select count(*), min(octet_length(factors)) from model_user_factors where model_id = " + id)) {
            rs.next();
            assertEquals(1, rs.getInt(1));
            assertEquals(4 * k, rs.getInt(2), "rank float32 values per row");
        }
    }

    @Test
    void factors_can_be_stored_only_once_and_only_while_training() {
        long id = registry.create(draft(1, "none", 1, 1));
        ModelFactors f = tiny();
        registry.storeFactors(id, f);
        assertThrows(ModelStateException.class, () -> registry.storeFactors(id, f));
        registry.finish(id, "candidate", "{}", null);
        long other = registry.create(draft(1, "none", 1, 1));
        registry.finish(other, "failed", null, "solver diverged");
        ModelStateException e = assertThrows(ModelStateException.class, () -> registry.storeFactors(other, f));
        assertEquals("model " + other + " is failed; factors can be stored only while it is training", e.getMessage());
    }

    @Test
    void factors_of_the_wrong_shape_are_refused() {
        long id = registry.create(draft(2, "none", 1, 1));
        IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> registry.storeFactors(id, tiny()));
        assertTrue(e.getMessage().contains("rank 1 but the version has rank 2"), e.getMessage());
    }

    @Test
    void finishing_records_status_metrics_reason_and_time() {
        long id = registry.create(draft(1, "none", 1, 1));
        registry.finish(id, "rejected", "{\"rmse\": 0.91}", "worse than the active model");
        ModelHeader h = registry.find(id).orElseThrow();
        assertEquals("rejected", h.status());
        assertEquals("{\"rmse\": 0.91}", h.metricsJson());
        assertEquals("worse than the active model", h.reason());
        assertNotNull(h.finishedAt());
        assertThrows(ModelStateException.class, () -> registry.finish(id, "candidate", null, null));
        assertThrows(IllegalArgumentException.class, () -> registry.finish(id, "active", null, null));
    }

    @Test
    void promotion_retires_the_previous_model_and_remembers_it() {
        long first = finished("candidate");
        long second = finished("candidate");
        assertEquals(Optional.empty(), registry.active());

        registry.promote(first);
        assertEquals(first, registry.active().orElseThrow().id());
        assertEquals(Optional.empty(), registry.previous());

        registry.promote(second);
        assertEquals(second, registry.active().orElseThrow().id());
        assertEquals("active", registry.find(second).orElseThrow().status());
        assertEquals("retired", registry.find(first).orElseThrow().status());
        assertEquals(Optional.of(first), registry.previous());

        registry.promote(second); // already active: nothing changes
        assertEquals(Optional.of(first), registry.previous());
    }

    @Test
    void rollback_returns_to_the_previous_model_and_twice_returns_again() {
        long first = finished("candidate");
        long second = finished("candidate");
        assertThrows(ModelStateException.class, () -> registry.rollback());
        registry.promote(first);
        registry.promote(second);
        assertEquals(first, registry.rollback());
        assertEquals(first, registry.active().orElseThrow().id());
        assertEquals("retired", registry.find(second).orElseThrow().status());
        assertEquals(second, registry.rollback());
        assertEquals(second, registry.active().orElseThrow().id());
    }

    @Test
    void training_and_failed_models_cannot_be_promoted_but_rejected_ones_can() {
        long training = registry.create(draft(1, "none", 1, 1));
        long failed = finished("failed");
        long rejected = finished("rejected");
        ModelStateException e = assertThrows(ModelStateException.class, () -> registry.promote(training));
        assertEquals("model " + training + " is training and cannot be promoted; wait until its training finishes", e.getMessage());
        assertThrows(ModelStateException.class, () -> registry.promote(failed));
        assertThrows(UnknownModelException.class, () -> registry.promote(999_999));
        registry.promote(rejected);
        assertEquals(rejected, registry.active().orElseThrow().id());
    }

    @Test
    void promotion_notifies_listeners_with_the_model_id() throws SQLException {
        long id = finished("candidate");
        try (Connection listener = db.dataSource().getConnection()) {
            try (Statement s = listener.createStatement()) {
                s.execute("listen " + ModelRegistry.NOTIFY_CHANNEL);
            }
            registry.promote(id);
            PGNotification[] got = listener.unwrap(PGConnection.class).getNotifications(NOTIFY_WAIT_MS);
            assertNotNull(got);
            assertEquals(1, got.length);
            assertEquals(ModelRegistry.NOTIFY_CHANNEL, got[0].getName());
            assertEquals(Long.toString(id), got[0].getParameter());
            try (Statement s = listener.createStatement()) {
                s.execute("unlisten *");
            }
        }
    }

    @Test
    void the_list_is_newest_first() {
        long a = registry.create(draft(1, "none", 1, 1));
        long b = registry.create(draft(1, "none", 1, 1));
        long c = registry.create(draft(1, "none", 1, 1));
        assertEquals(List.of(c, b, a), registry.list().stream().map(ModelHeader::id).toList());
    }

    @Test
    void deleting_removes_a_version_and_its_factors_but_never_the_active_or_rollback_one() throws SQLException {
        long first = finished("candidate");
        long second = finished("candidate");
        long third = finished("rejected");
        registry.promote(first);
        registry.promote(second);
        assertThrows(ModelStateException.class, () -> registry.delete(first));
        assertThrows(ModelStateException.class, () -> registry.delete(second));
        registry.delete(third);
        assertEquals(Optional.empty(), registry.find(third));
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement();
             var rs = s.executeQuery("select count(*) from model_user_factors where model_id = " + third)) {
            rs.next();
            assertEquals(0, rs.getInt(1));
        }
        assertThrows(UnknownModelException.class, () -> registry.delete(third));
    }

    @Test
    void loading_an_unknown_model_says_so() {
        UnknownModelException e = assertThrows(UnknownModelException.class, () -> registry.loadFactors(424242));
        assertEquals(424242, e.modelId());
    }

    private long finished(String status) {
        long id = registry.create(draft(1, "none", 1, 1));
        if (!status.equals("failed")) {
            registry.storeFactors(id, tiny());
        }
        registry.finish(id, status, null, null);
        return id;
    }

    private static ModelFactors tiny() {
        BitSet one = new BitSet();
        one.set(0);
        return new ModelFactors(1, new float[] {0.5f}, new float[] {0.1f}, one, new float[] {0.25f}, new float[] {0.2f},
                new float[] {1f}, one, null);
    }
}
