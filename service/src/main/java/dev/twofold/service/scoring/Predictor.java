package dev.twofold.service.scoring;

import dev.twofold.service.model.ServingModel;

/** Predicted ratings for single (user, item) pairs. */
public final class Predictor {

    private Predictor() {
    }

    /**
     * r̂(u,i) = μ + b_u + b_i + p_u·q_i clamped to the scale, for a serving item index; for a user
     * without factors (including {@code user = -1}, unknown) the prediction is μ + b_i, clamped.
     * Cost: O(k).
     */
    public static float predict(ServingModel model, int user, int item) {
        double r = (double) model.globalMean() + model.itemBias()[item];
        if (model.hasFactors(user)) {
            int k = model.rank();
            r += model.userBias()[user] + ScoreKernel.dot(model.userFactors(), user * k, model.itemFactors(), item * k, k);
        }
        return model.clampToScale(r);
    }

    /**
     * The same prediction for a resolved user: with a vector (own, folded or trust-built),
     * μ + b + b_i + x·q_i; without, μ + b_i; clamped to the scale.
     */
    public static float predict(ServingModel model, UserVector user, int item) {
        double r = (double) model.globalMean() + model.itemBias()[item];
        if (user.hasVector()) {
            int k = model.rank();
            r += user.bias() + ScoreKernel.dot(user.factors(), user.offset(), model.itemFactors(), item * k, k);
        }
        return model.clampToScale(r);
    }
}
