package dev.twofold.service;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.DatabaseUnavailableException;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.service.fresh.LiveModels;
import dev.twofold.service.model.ModelSource;
import dev.twofold.service.model.ServingModel;
import dev.twofold.service.testing.KitchenModel;
import java.time.Duration;
import java.util.Optional;
import java.util.concurrent.CountDownLatch;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicInteger;
import java.util.function.BooleanSupplier;
import org.junit.jupiter.api.Test;

class ModelWatcherTest {

    private static final Duration FAST = Duration.ofMillis(20);
    private static final Duration SLOW = Duration.ofHours(1);
    private static final long WAIT_SECONDS = 20;

    /** A registry stand-in: the active pointer is set by the test; loads can be made to fail. */
    private static final class ScriptedSource implements ModelSource {
        volatile Long active;
        volatile RuntimeException activeFailure;
        volatile RuntimeException loadFailure;
        final AtomicInteger loads = new AtomicInteger();

        @Override
        public Optional<ModelHeader> active() {
            RuntimeException failure = activeFailure;
            if (failure != null) {
                throw failure;
            }
            Long id = active;
            return id == null ? Optional.empty() : Optional.of(KitchenModel.header(id, KitchenModel.K,
                    KitchenModel.TRAINED_USERS, KitchenModel.TRAINED_ITEMS, KitchenModel.MU, KitchenModel.SCALE_MIN,
                    KitchenModel.SCALE_MAX));
        }

        @Override
        public ServingModel load(ModelHeader header) {
            loads.incrementAndGet();
            RuntimeException failure = loadFailure;
            if (failure != null) {
                throw failure;
            }
            return KitchenModel.build(header.id());
        }
    }

    @Test
    void the_first_model_is_installed_after_empty_and_failed_checks_and_is_not_loaded_again() {
        ScriptedSource source = new ScriptedSource();
        LiveModels live = new LiveModels(10);
        try (ModelWatcher watcher = new ModelWatcher(source, live, SLOW)) {
            assertFalse(watcher.check(), "nothing promoted yet");
            source.active = 7L;
            source.activeFailure = new DatabaseUnavailableException("database at 127.0.0.1:1 refused the connection",
                    null);
            assertFalse(watcher.check(), "database down");
            assertTrue(live.model().isEmpty());
            source.activeFailure = null;
            assertTrue(watcher.check());
            assertEquals(7, live.model().orElseThrow().id());
            assertTrue(watcher.check(), "still has a model");
            assertEquals(1, source.loads.get(), "the same active id is not loaded twice");
        }
    }

    @Test
    void a_newly_active_version_replaces_the_served_one_and_a_failing_load_keeps_the_old_one_serving() {
        ScriptedSource source = new ScriptedSource();
        LiveModels live = new LiveModels(10);
        try (ModelWatcher watcher = new ModelWatcher(source, live, SLOW)) {
            source.active = 1L;
            assertTrue(watcher.check());
            source.active = 2L;
            assertTrue(watcher.check());
            assertEquals(2, live.model().orElseThrow().id());

            source.active = 3L;
            source.loadFailure = new IllegalArgumentException("model 3: Q holds NaN at row 4; the model cannot be served");
            assertTrue(watcher.check(), "still serving");
            assertEquals(2, live.model().orElseThrow().id());
            int loads = source.loads.get();
            assertTrue(watcher.check());
            assertEquals(loads, source.loads.get(), "a version that cannot be served is not loaded again");

            source.loadFailure = null;
            source.active = 1L;
            assertTrue(watcher.check());
            assertEquals(1, live.model().orElseThrow().id(), "a rollback to an earlier version is followed");

            source.active = 4L;
            source.loadFailure = new DatabaseUnavailableException("database went away", null);
            assertTrue(watcher.check());
            assertEquals(1, live.model().orElseThrow().id());
            source.loadFailure = null;
            assertTrue(watcher.check(), "a load that failed for the database is retried");
            assertEquals(4, live.model().orElseThrow().id());
        }
    }

    @Test
    void polling_in_the_background_follows_the_active_pointer() throws InterruptedException {
        ScriptedSource source = new ScriptedSource();
        LiveModels live = new LiveModels(10);
        try (ModelWatcher watcher = new ModelWatcher(source, live, FAST)) {
            watcher.start();
            source.active = 5L;
            awaitTrue(() -> live.model().map(m -> m.id() == 5).orElse(false));
            source.active = 6L;
            awaitTrue(() -> live.model().map(m -> m.id() == 6).orElse(false));
        }
    }

    @Test
    void check_soon_runs_a_check_at_once_without_waiting_for_the_poll() throws InterruptedException {
        ScriptedSource source = new ScriptedSource();
        LiveModels live = new LiveModels(10);
        CountDownLatch loaded = new CountDownLatch(1);
        ModelSource counting = new ModelSource() {
            @Override
            public Optional<ModelHeader> active() {
                return source.active();
            }

            @Override
            public ServingModel load(ModelHeader header) {
                ServingModel m = source.load(header);
                loaded.countDown();
                return m;
            }
        };
        try (ModelWatcher watcher = new ModelWatcher(counting, live, SLOW)) {
            watcher.start();
            source.active = 9L;
            watcher.checkSoon();
            watcher.checkSoon();
            assertTrue(loaded.await(WAIT_SECONDS, TimeUnit.SECONDS));
            awaitTrue(() -> live.model().isPresent());
            assertEquals(9, live.model().orElseThrow().id());
        }
    }

    private static void awaitTrue(BooleanSupplier condition) throws InterruptedException {
        long deadline = System.nanoTime() + TimeUnit.SECONDS.toNanos(WAIT_SECONDS);
        while (!condition.getAsBoolean()) {
            if (System.nanoTime() > deadline) {
                throw new AssertionError("gave up waiting");
            }
            Thread.sleep(5);
        }
    }
}
