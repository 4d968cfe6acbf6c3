package dev.twofold.service.fresh;

import dev.twofold.service.model.ServingModel;
import dev.twofold.service.scoring.ListCache;
import dev.twofold.service.scoring.Ranker;
import dev.twofold.service.scoring.Recommendation;
import dev.twofold.service.scoring.UserVector;
import java.util.List;
import java.util.Map;
import java.util.concurrent.CompletableFuture;

/**
 * What the service answers from at one moment: a model, the users folded into it since it was
 * loaded, and the ranked lists kept for users it alone knows ({@link ListCache}). Requests read
 * the current one once and use it throughout, so each sees one model.
 */
public final class LiveModel {

    private static final int[] NONE = new int[0];

    private final ServingModel model;
    private final FreshUsers fresh;
    private final Map<String, Long> erased;
    private final ListCache lists;

    LiveModel(ServingModel model, FreshUsers fresh, Map<String, Long> erased, ListCache lists) {
        this.model = model;
        this.fresh = fresh;
        this.erased = erased;
        this.lists = lists;
    }

    public ServingModel model() {
        return model;
    }

    public FreshUsers fresh() {
        return fresh;
    }

    /**
     * This model and its users with kept lists of their own, as large and counted apart: for the
     * HTTP warm-up, whose requests must neither count as traffic nor fill the real lists.
     */
    public LiveModel apart() {
        return new LiveModel(model, fresh, erased, new ListCache(model.userIndexSpace(),
                (long) lists.slots() * ListCache.ENTRY_BYTES, new ListCache.Stats()));
    }

    /** The ranked lists kept for this model's users. */
    public ListCache lists() {
        return lists;
    }

    /**
     * The user as served now: folded in since the load if they were, else as the model knows them;
     * a user erased since the load as someone nobody knows.
     */
    public UserVector user(String userId) {
        FreshUser folded = fresh.get(userId);
        if (folded != null) {
            return folded.vector();
        }
        if (erased(userId)) {
            return UserVector.popular(NONE, 0, 0);
        }
        return UserVector.fromModel(model, userId);
    }

    /**
     * The user's best {@code count} items without {@code exclude}, as {@link #user} serves them:
     * from the kept lists when the model alone knows the user (their list depends on nothing
     * else), else ranked afresh. A list kept while a write of the user is being folded in is
     * never read: from then on the user is folded and ranked afresh.
     */
    public CompletableFuture<Recommendation> recommendLater(Ranker ranker, String userId, int count,
            List<String> exclude) {
        if (fresh.get(userId) != null || erased(userId)) {
            return ranker.recommendLater(model, user(userId), count, exclude);
        }
        int u = model.userIndex(userId);
        return ranker.recommendLater(model, UserVector.fromModel(model, u), u, count, exclude, lists);
    }

    private boolean erased(String userId) {
        return !erased.isEmpty() && erased.containsKey(userId);
    }

    /** Ids erased since this model was loaded (or shortly before), with when, epoch milliseconds. */
    Map<String, Long> erased() {
        return erased;
    }
}
