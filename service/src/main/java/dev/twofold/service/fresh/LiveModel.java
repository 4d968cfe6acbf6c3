package dev.twofold.service.fresh;

import dev.twofold.service.model.ServingModel;
import dev.twofold.service.scoring.UserVector;
import java.util.Map;

/**
 * What the service answers from at one moment: a model and the users folded into it since it was
 * loaded. Requests read the current one once and use it throughout, so each sees one model.
 */
public final class LiveModel {

    private static final int[] NONE = new int[0];

    private final ServingModel model;
    private final FreshUsers fresh;
    private final Map<String, Long> erased;

    LiveModel(ServingModel model, FreshUsers fresh, Map<String, Long> erased) {
        this.model = model;
        this.fresh = fresh;
        this.erased = erased;
    }

    public ServingModel model() {
        return model;
    }

    public FreshUsers fresh() {
        return fresh;
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
        if (!erased.isEmpty() && erased.containsKey(userId)) {
            return UserVector.popular(NONE, 0, 0);
        }
        return UserVector.fromModel(model, userId);
    }

    /** Ids erased since this model was loaded (or shortly before), with when, epoch milliseconds. */
    Map<String, Long> erased() {
        return erased;
    }
}
