package dev.twofold.trainer.parallel;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.concurrent.atomic.AtomicIntegerArray;
import org.junit.jupiter.api.Test;

class WorkersTest {

    @Test
    void every_row_is_visited_exactly_once_by_a_worker_in_range() {
        try (Workers workers = new Workers(3)) {
            AtomicIntegerArray visits = new AtomicIntegerArray(10_000);
            workers.forEachChunk(10_000, 64, 0, (w, from, to) -> {
                assertTrue(w >= 0 && w < 3);
                for (int r = from; r < to; r++) {
                    visits.incrementAndGet(r);
                }
            });
            for (int r = 0; r < 10_000; r++) {
                assertEquals(1, visits.get(r), "row " + r);
            }
        }
    }

    @Test
    void small_loops_run_on_the_calling_thread_in_one_piece() {
        try (Workers workers = new Workers(2)) {
            Thread caller = Thread.currentThread();
            int[] calls = new int[1];
            workers.forEachChunk(100, 10, 1000, (w, from, to) -> {
                assertEquals(caller, Thread.currentThread());
                assertEquals(0, from);
                assertEquals(100, to);
                calls[0]++;
            });
            assertEquals(1, calls[0]);
        }
    }

    @Test
    void a_failing_chunk_is_rethrown_to_the_caller() {
        try (Workers workers = new Workers(2)) {
            IllegalStateException e = assertThrows(IllegalStateException.class,
                    () -> workers.forEachChunk(1000, 10, 0, (w, from, to) -> {
                        if (from == 500) {
                            throw new IllegalStateException("chunk 50 broke");
                        }
                    }));
            assertEquals("chunk 50 broke", e.getMessage());
        }
    }

    @Test
    void close_is_safe_twice_and_refuses_later_parallel_work() {
        Workers workers = new Workers(2);
        workers.forEachChunk(100, 10, 0, (w, from, to) -> { });
        workers.close();
        workers.close();
        assertThrows(IllegalStateException.class, () -> workers.forEachChunk(100, 10, 0, (w, from, to) -> { }));
    }
}
