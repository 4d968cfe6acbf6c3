package dev.twofold.trainer.parallel;

import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.CancellationException;
import java.util.concurrent.ExecutionException;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.atomic.AtomicInteger;

/**
 * A fixed set of threads that run loops over rows in chunks. Each chunk is handled by exactly one
 * worker, and a task sees its worker number so it can use that worker's scratch buffers. Whatever
 * the thread count, every row is computed by the same code from the same inputs, so a loop whose
 * chunks write disjoint outputs (and whose sums are combined per chunk in chunk order) gives the
 * same result with 1 thread or many.
 *
 * <p>The calling thread works too; {@code threads - 1} daemon threads are started lazily on the
 * first parallel loop. {@link #close()} stops them (bounded wait) and is safe to call twice.
 */
public final class Workers implements AutoCloseable {

    /** One piece of a loop: rows {@code from} (inclusive) to {@code to} (exclusive), run by worker {@code worker}. */
    @FunctionalInterface
    public interface ChunkTask {
        void run(int worker, int from, int to);
    }

    public static final int MAX_THREADS = 1024;
    private static final long CLOSE_WAIT_MS = 5_000;

    private final int threads;
    private ExecutorService pool;
    private boolean closed;

    /** @param threads worker count including the calling thread, 1..1024 */
    public Workers(int threads) {
        if (threads < 1 || threads > MAX_THREADS) {
            throw new IllegalArgumentException("threads " + threads + " outside 1.." + MAX_THREADS);
        }
        this.threads = threads;
    }

    public int threads() {
        return threads;
    }

    /**
     * Runs {@code task} over rows {@code 0..count-1} cut into chunks of {@code chunkSize} rows (the
     * last may be shorter). With one thread, or fewer than {@code minParallelRows} rows, everything
     * runs on the calling thread as worker 0 in one call. The first exception thrown by a task stops
     * the loop and is rethrown here.
     */
    public void forEachChunk(int count, int chunkSize, int minParallelRows, ChunkTask task) {
        if (chunkSize < 1) {
            throw new IllegalArgumentException("chunk size " + chunkSize + " must be at least 1");
        }
        if (count <= 0) {
            return;
        }
        int chunks = (count + chunkSize - 1) / chunkSize;
        if (threads == 1 || count < minParallelRows || chunks == 1) {
            task.run(0, 0, count);
            return;
        }
        ExecutorService executor = pool();
        AtomicInteger next = new AtomicInteger();
        AtomicBoolean failed = new AtomicBoolean();
        int helpers = Math.min(threads, chunks) - 1;
        List<Future<?>> futures = new ArrayList<>(helpers);
        for (int w = 1; w <= helpers; w++) {
            int worker = w;
            futures.add(executor.submit(() -> drain(worker, count, chunkSize, chunks, next, failed, task)));
        }
        Throwable first = null;
        try {
            drain(0, count, chunkSize, chunks, next, failed, task);
        } catch (RuntimeException | Error e) {
            first = e;
        }
        boolean interrupted = false;
        for (Future<?> f : futures) {
            while (true) {
                try {
                    f.get();
                    break;
                } catch (InterruptedException e) {
                    interrupted = true;
                    failed.set(true);
                } catch (ExecutionException e) {
                    if (first == null) {
                        first = e.getCause();
                    }
                    break;
                }
            }
        }
        if (interrupted) {
            Thread.currentThread().interrupt();
            if (first == null) {
                throw new CancellationException("interrupted while waiting for worker threads");
            }
        }
        if (first instanceof RuntimeException r) {
            throw r;
        }
        if (first instanceof Error err) {
            throw err;
        }
        if (first != null) {
            throw new IllegalStateException("worker failed", first);
        }
    }

    private static void drain(int worker, int count, int chunkSize, int chunks, AtomicInteger next, AtomicBoolean failed,
            ChunkTask task) {
        try {
            for (int c = next.getAndIncrement(); c < chunks && !failed.get(); c = next.getAndIncrement()) {
                int from = c * chunkSize;
                task.run(worker, from, Math.min(count, from + chunkSize));
            }
        } catch (RuntimeException | Error e) {
            failed.set(true);
            throw e;
        }
    }

    private synchronized ExecutorService pool() {
        if (closed) {
            throw new IllegalStateException("workers already closed");
        }
        if (pool == null) {
            AtomicInteger n = new AtomicInteger();
            pool = Executors.newFixedThreadPool(threads - 1, r -> {
                Thread t = new Thread(r, "twofold-worker-" + n.incrementAndGet());
                t.setDaemon(true);
                return t;
            });
        }
        return pool;
    }

    @Override
    public synchronized void close() {
        if (closed) {
            return;
        }
        closed = true;
        if (pool == null) {
            return;
        }
        pool.shutdown();
        try {
            if (!pool.awaitTermination(CLOSE_WAIT_MS, TimeUnit.MILLISECONDS)) {
                pool.shutdownNow();
            }
        } catch (InterruptedException e) {
            pool.shutdownNow();
            Thread.currentThread().interrupt();
        }
    }
}
