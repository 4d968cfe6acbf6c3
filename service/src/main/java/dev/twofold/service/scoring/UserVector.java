package dev.twofold.service.scoring;

import dev.twofold.service.model.ServingModel;

/**
 * What ranking needs to know about one user: how they are served, their factor vector (k values
 * at {@code factors[offset]}) and bias when they have one, and the items they rated as serving
 * item indices sorted ascending ({@code rated[ratedFrom..ratedTo)}).
 *
 * <p>The arrays are shared with the model or the fresh-user state they come from: never modify.
 *
 * @param strategy {@link Strategy#MODEL} or {@link Strategy#TRUST} with a vector; {@link Strategy#POPULAR} without
 */
public record UserVector(Strategy strategy, float[] factors, int offset, float bias, int[] rated, int ratedFrom,
        int ratedTo) {

    private static final int[] NONE = new int[0];

    /** A user about whom the model knows nothing usable: served by popularity. */
    public static UserVector popular(int[] rated, int ratedFrom, int ratedTo) {
        return new UserVector(Strategy.POPULAR, null, 0, 0f, rated, ratedFrom, ratedTo);
    }

    /**
     * The user as the model alone knows them: their own factors when trained, else a trust-built
     * vector when they trust users with factors, else popularity; rated items from the model's
     * ratings. An unknown id is served by popularity with nothing rated.
     */
    public static UserVector fromModel(ServingModel model, String userId) {
        return fromModel(model, model.userIndex(userId));
    }

    /** {@link #fromModel(ServingModel, String)} by the model's user index ({@code -1}: unknown). */
    public static UserVector fromModel(ServingModel model, int u) {
        if (u < 0) {
            return popular(NONE, 0, 0);
        }
        int from = model.ratedStart(u);
        int to = model.ratedEnd(u);
        if (model.hasFactors(u)) {
            return new UserVector(Strategy.MODEL, model.userFactors(), u * model.rank(), model.userBias()[u],
                    model.ratedItems(), from, to);
        }
        int row = model.trustBuiltRow(u);
        if (row >= 0) {
            return new UserVector(Strategy.TRUST, model.trustBuiltFactors(), row * model.rank(),
                    model.trustBuiltBias()[row], model.ratedItems(), from, to);
        }
        return popular(model.ratedItems(), from, to);
    }

    /** Whether the user has a factor vector (model or trust). */
    public boolean hasVector() {
        return factors != null;
    }
}
