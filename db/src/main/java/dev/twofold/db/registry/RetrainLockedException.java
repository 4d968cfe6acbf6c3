package dev.twofold.db.registry;

import dev.twofold.db.TwofoldException;
import java.util.Optional;

/**
 * Another retrain holds the retrain lock; this one stopped before changing anything. Exit code 75
 * (try again later). The message names the holder as well as PostgreSQL can tell.
 */
public final class RetrainLockedException extends TwofoldException {

    private final transient RetrainLock.Holder holder;

    public RetrainLockedException(String message, RetrainLock.Holder holder) {
        super(message);
        this.holder = holder;
    }

    /** Who holds the lock, when it could be found (it may have been released a moment ago). */
    public Optional<RetrainLock.Holder> holder() {
        return Optional.ofNullable(holder);
    }

    @Override
    public int exitCode() {
        return EXIT_LOCKED;
    }
}
