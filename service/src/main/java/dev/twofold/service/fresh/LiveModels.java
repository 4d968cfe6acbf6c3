package dev.twofold.service.fresh;

import dev.twofold.db.snapshot.UserHistory;
import dev.twofold.service.model.ServingModel;
import dev.twofold.service.scoring.ListCache;
import dev.twofold.trainer.fit.FoldIn;
import java.time.Clock;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import java.util.concurrent.ConcurrentHashMap;
import java.util.concurrent.atomic.AtomicLong;
import java.util.concurrent.atomic.AtomicReference;
import java.util.function.IntConsumer;

/**
 * The current {@link LiveModel}, replaced in one atomic step, and the two ways it changes:
 *
 * <ul>
 *   <li>{@link #foldIn}: users who just wrote are re-solved against the current model and put into
 *       its fresh users;</li>
 *   <li>{@link #install}: a new model arrives. Folded users whose last write is not older than the
 *       new model's creation time minus {@link #REBASE_MARGIN} (the new model may not have seen
 *       them: it was trained on a snapshot read shortly before its creation) are re-solved against
 *       it from their stored history; the others are in the new model already and are dropped.
 *       The re-solving runs before the swap, outside the lock writers take; under the lock only
 *       the users written meanwhile are re-solved, then the new live model replaces the old.</li>
 * </ul>
 * Readers never lock: they read the reference. Writers ({@link #foldIn}) and the final step of
 * {@link #install} hold one lock, so no write is folded into a model that is being replaced and
 * then lost.
 */
public final class LiveModels {

    /** Slack between a model's training snapshot and its creation time, plus clock skew between hosts. */
    public static final Duration REBASE_MARGIN = Duration.ofMinutes(10);

    private final AtomicReference<LiveModel> current = new AtomicReference<>();
    private final AtomicLong sequence = new AtomicLong();
    private final Object writes = new Object();
    private final Object installs = new Object();
    private final int capacity;
    private final long listBytes;
    private final ListCache.Stats listStats = new ListCache.Stats();
    private final Clock clock;

    /** Told after every swap: the model now answering and how long the swap took (for metrics). */
    public interface InstallListener {
        void installed(ServingModel model, long swapNanos);
    }

    private volatile InstallListener installListener = (model, nanos) -> { };

    /** Sets who is told of every swap (one listener; the service's operator view). */
    public void onInstall(InstallListener listener) {
        installListener = listener == null ? (model, nanos) -> { } : listener;
    }

    private volatile IntConsumer foldInListener = users -> { };

    /** Sets who is told how many users each {@link #foldIn} folded in (one listener; the service's operator view). */
    public void onFoldIn(IntConsumer listener) {
        foldInListener = listener == null ? users -> { } : listener;
    }

    /** @param capacity most users kept folded in per model; no ranked lists are kept */
    public LiveModels(int capacity) {
        this(capacity, 0, Clock.systemUTC());
    }

    /**
     * @param capacity  most users kept folded in per model
     * @param listBytes most bytes of ranked lists kept per model ({@link ListCache}); 0 keeps none
     */
    public LiveModels(int capacity, long listBytes) {
        this(capacity, listBytes, Clock.systemUTC());
    }

    LiveModels(int capacity, long listBytes, Clock clock) {
        if (capacity < 0) {
            throw new IllegalArgumentException("fresh user capacity " + capacity + " must be >= 0");
        }
        if (listBytes < 0) {
            throw new IllegalArgumentException("ranked list budget " + listBytes + " bytes must be >= 0");
        }
        this.capacity = capacity;
        this.listBytes = listBytes;
        this.clock = clock;
    }

    /** Lookups of the kept ranked lists of every model so far. */
    public ListCache.Stats listStats() {
        return listStats;
    }

    /** What requests answer from now, or null before the first model. */
    public LiveModel current() {
        return current.get();
    }

    /** The model answering now, if any. */
    public Optional<ServingModel> model() {
        LiveModel live = current.get();
        return live == null ? Optional.empty() : Optional.of(live.model());
    }

    /**
     * Makes {@code next} the model requests answer from, carrying over the folded users it may
     * not know (see the class comment); returns the model it replaced, if any.
     */
    public Optional<ServingModel> install(ServingModel next) {
        if (next == null) {
            throw new IllegalArgumentException("model must not be null");
        }
        long started = System.nanoTime();
        synchronized (installs) {
            LiveModel old = current.get();
            if (old == null) {
                synchronized (writes) {
                    current.set(new LiveModel(next, new FreshUsers(capacity), new ConcurrentHashMap<>(), lists(next)));
                }
                installListener.installed(next, System.nanoTime() - started);
                return Optional.empty();
            }
            long cutoff = next.header().createdAt().toEpochMilli() - REBASE_MARGIN.toMillis();
            FreshUsers rebased = new FreshUsers(capacity);
            FoldIn.Scratch scratch = next.foldIn().newScratch();
            for (FreshUser user : old.fresh().all()) {
                if (user.writtenAt() >= cutoff) {
                    rebased.put(refold(next, user, scratch));
                }
            }
            synchronized (writes) {
                for (FreshUser user : old.fresh().all()) {
                    FreshUser done = rebased.get(user.userId());
                    if (user.writtenAt() >= cutoff && (done == null || done.sequence() < user.sequence())) {
                        rebased.put(refold(next, user, scratch));
                    }
                }
                // the new model may have been read before a recent erasure committed: keep those
                Map<String, Long> erased = new ConcurrentHashMap<>();
                old.erased().forEach((id, at) -> {
                    if (at >= cutoff) {
                        erased.put(id, at);
                    }
                });
                for (String id : erased.keySet()) {
                    rebased.remove(id);
                }
                current.set(new LiveModel(next, rebased, erased, lists(next)));
            }
            installListener.installed(next, System.nanoTime() - started);
            return Optional.of(old.model());
        }
    }

    /**
     * Folds the given users' histories (read after their write was committed) into the current
     * model; returns how many were folded (0 before the first model: the load reads their data).
     * Histories of ids nobody has (a user erased meanwhile) remove the user instead.
     */
    public int foldIn(List<UserHistory> histories) {
        LiveModel live = current.get();
        if (live == null || histories.isEmpty()) {
            return 0;
        }
        long now = clock.millis();
        List<FreshUser> made = new ArrayList<>(histories.size());
        FoldIn.Scratch scratch = live.model().foldIn().newScratch();
        for (UserHistory h : histories) {
            if (h.user() >= 0) {
                made.add(new FreshUser(h.userId(), sequence.incrementAndGet(), now, h,
                        FoldedVectors.fold(live.model(), h, scratch)));
            }
        }
        synchronized (writes) {
            LiveModel target = current.get();
            if (target != live) {
                scratch = target.model().foldIn().newScratch();
            }
            for (UserHistory h : histories) {
                if (h.user() < 0) {
                    target.fresh().remove(h.userId());
                }
            }
            for (FreshUser user : made) {
                target.erased().remove(user.userId()); // written again after an erasure: a new user
                target.fresh().put(target == live ? user : refold(target.model(), user, scratch));
            }
        }
        if (!made.isEmpty()) {
            foldInListener.accept(made.size());
        }
        return made.size();
    }

    /**
     * Drops a user whose data was erased (by this or another process): their fresh state and kept
     * list go, and until the next model load they are served as someone nobody knows.
     */
    public void forget(String userId) {
        synchronized (writes) {
            LiveModel live = current.get();
            if (live != null) {
                live.fresh().remove(userId);
                live.erased().put(userId, clock.millis());
                live.lists().drop(live.model().userIndex(userId));
            }
        }
    }

    /** An empty cache of ranked lists for {@code model}: every model starts without any. */
    private ListCache lists(ServingModel model) {
        return new ListCache(model.userIndexSpace(), listBytes, listStats);
    }

    private static FreshUser refold(ServingModel model, FreshUser user, FoldIn.Scratch scratch) {
        return new FreshUser(user.userId(), user.sequence(), user.writtenAt(), user.history(),
                FoldedVectors.fold(model, user.history(), scratch));
    }
}
