package dev.twofold.service;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.DatabaseUnavailableException;
import dev.twofold.service.model.ServingModel;
import dev.twofold.service.testing.KitchenModel;
import java.time.Duration;
import java.util.ArrayDeque;
import java.util.Deque;
import java.util.Optional;
import java.util.concurrent.CountDownLatch;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicInteger;
import java.util.function.Supplier;
import org.junit.jupiter.api.Test;

class ModelWatcherTest {

    private static final Duration FAST = Duration.ofMillis(20);
    private static final long WAIT_SECONDS = 20;

    private static ServiceSettings settings() {
        return new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(5), FAST);
    }

    @Test
    void the_first_model_is_installed_after_empty_and_failed_checks_and_then_checking_stops() {
        Deque<Supplier<Optional<ServingModel>>> answers = new ArrayDeque<>();
        answers.add(Optional::empty);
        answers.add(() -> {
            throw new DatabaseUnavailableException("database at 127.0.0.1:1 refused the connection", null);
        });
        answers.add(() -> Optional.of(KitchenModel.build()));
        AtomicInteger loads = new AtomicInteger();
        Supplier<Optional<ServingModel>> loader = () -> {
            loads.incrementAndGet();
            return answers.isEmpty() ? Optional.empty() : answers.poll().get();
        };
        try (Service service = new Service(settings());
                ModelWatcher watcher = new ModelWatcher(loader, service, FAST)) {
            assertFalse(watcher.check(), "nothing promoted yet");
            assertFalse(watcher.check(), "database down");
            assertTrue(service.model().isEmpty());
            assertTrue(watcher.check());
            assertEquals(KitchenModel.MODEL_ID, service.model().orElseThrow().id());
            assertTrue(watcher.check(), "still has a model");
            assertEquals(3, loads.get(), "no load once a model is in");
        }
    }

    @Test
    void in_the_background_it_keeps_checking_until_a_model_arrives() throws InterruptedException {
        CountDownLatch threeChecks = new CountDownLatch(3);
        Supplier<Optional<ServingModel>> loader = () -> {
            threeChecks.countDown();
            return threeChecks.getCount() == 0 ? Optional.of(KitchenModel.build()) : Optional.empty();
        };
        try (Service service = new Service(settings());
                ModelWatcher watcher = new ModelWatcher(loader, service, FAST)) {
            watcher.start();
            assertTrue(threeChecks.await(WAIT_SECONDS, TimeUnit.SECONDS));
            long deadline = System.nanoTime() + TimeUnit.SECONDS.toNanos(WAIT_SECONDS);
            while (service.model().isEmpty() && System.nanoTime() < deadline) {
                Thread.sleep(5);
            }
            assertTrue(service.model().isPresent());
        }
    }
}
