package dev.twofold.service.fresh;

import dev.twofold.service.model.ServingModel;
import dev.twofold.service.scoring.UserVector;

/**
 * What the service answers from at one moment: a model and the users folded into it since it was
 * loaded. Requests read the current one once and use it throughout, so each sees one model.
 */
public final class LiveModel {

    private final ServingModel model;
    private final FreshUsers fresh;

    LiveModel(ServingModel model, FreshUsers fresh) {
        this.model = model;
        this.fresh = fresh;
    }

    public ServingModel model() {
        return model;
    }

    public FreshUsers fresh() {
        return fresh;
    }

    /** The user as served now: folded in since the load if they were, else as the model knows them. */
    public UserVector user(String userId) {
        FreshUser folded = fresh.get(userId);
        return folded != null ? folded.vector() : UserVector.fromModel(model, userId);
    }
}
