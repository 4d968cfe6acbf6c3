package dev.twofold.db.embedded;

import dev.twofold.db.DatabaseUnavailableException;
import java.io.IOException;
import java.nio.channels.FileChannel;
import java.nio.channels.FileLock;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardOpenOption;
import java.util.concurrent.ConcurrentHashMap;
import java.util.concurrent.locks.ReentrantLock;

/**
 * Serialises "start or join" and "stop if unused" on one data directory across threads and
 * processes: a JVM-wide lock per directory (file locks are per process) plus an exclusive lock on
 * {@code pg.lock}. It is held only for those short decisions, never while the server runs.
 */
public final class DataDirectoryLock implements AutoCloseable {

    private static final ConcurrentHashMap<Path, ReentrantLock> IN_PROCESS = new ConcurrentHashMap<>();

    private final ReentrantLock local;
    private final FileChannel channel;
    private final FileLock lock;
    private boolean released;

    private DataDirectoryLock(ReentrantLock local, FileChannel channel, FileLock lock) {
        this.local = local;
        this.channel = channel;
        this.lock = lock;
    }

    /** Blocks until this thread holds the directory exclusively. */
    public static DataDirectoryLock acquire(Path dataDir) {
        Path key = dataDir.toAbsolutePath().normalize();
        ReentrantLock local = IN_PROCESS.computeIfAbsent(key, k -> new ReentrantLock());
        local.lock();
        try {
            Files.createDirectories(key);
            FileChannel channel = FileChannel.open(key.resolve("pg.lock"), StandardOpenOption.CREATE, StandardOpenOption.WRITE);
            try {
                return new DataDirectoryLock(local, channel, channel.lock());
            } catch (IOException | RuntimeException e) {
                channel.close();
                throw e;
            }
        } catch (IOException e) {
            local.unlock();
            throw new DatabaseUnavailableException("could not lock the data directory " + key + ": " + e.getMessage()
                    + "; check TWOFOLD_DATA_DIR points to a writable local directory", e);
        } catch (RuntimeException e) {
            local.unlock();
            throw e;
        }
    }

    /** Runs {@code work} while holding the lock of {@code dataDir}; returns its result. */
    public static <T> T holding(Path dataDir, java.util.function.Supplier<T> work) {
        try (DataDirectoryLock held = acquire(dataDir)) {
            held.requireHeld();
            return work.get();
        }
    }

    private void requireHeld() {
        if (released || !lock.isValid()) {
            throw new IllegalStateException("the data directory lock was released early");
        }
    }

    @Override
    public void close() {
        if (released) {
            return;
        }
        released = true;
        try {
            lock.release();
            channel.close();
        } catch (IOException e) {
            // Closing the channel releases the lock whatever happens.
        } finally {
            local.unlock();
        }
    }
}
