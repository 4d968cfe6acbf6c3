package dev.twofold.trainer.publish;

import dev.twofold.db.registry.ModelFactors;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.FittedModel;
import java.util.BitSet;
import java.util.List;

/** Moves a model between its fitted form and the registry's stored form. */
final class StoredModel {

    private StoredModel() {
    }

    /**
     * The registry form of a fitted model. {@code popularity} is stored per item for serving people
     * nobody knows (the count of training ratings at or above the relevance threshold).
     */
    static ModelFactors factorsOf(FittedModel model, float[] popularity) {
        return new ModelFactors(model.rank(), model.userFactors(), model.userBias(), model.knownUsers(),
                model.itemFactors(), model.itemBias(), popularity, model.knownItems(), model.trustFactors());
    }

    /**
     * A stored model as a scorer over the current index space: users and items that came after it
     * was trained get zero factors and biases, so it scores them as a model that never saw them would.
     */
    static FittedModel scorerOf(ModelHeader header, ModelFactors stored, int numUsers, int numItems) {
        int k = stored.rank();
        int m = Math.max(numUsers, stored.numUsers());
        int n = Math.max(numItems, stored.numItems());
        float[] p = new float[m * k];
        float[] bu = new float[m];
        float[] q = new float[n * k];
        float[] bi = new float[n];
        System.arraycopy(stored.userFactors(), 0, p, 0, stored.userFactors().length);
        System.arraycopy(stored.userBias(), 0, bu, 0, stored.userBias().length);
        System.arraycopy(stored.itemFactors(), 0, q, 0, stored.itemFactors().length);
        System.arraycopy(stored.itemBias(), 0, bi, 0, stored.itemBias().length);
        FitSettings settings = FitSettings.defaults().withRank(k).withCoupling(Coupling.NONE)
                .withLambda(Math.max(0f, header.lambda()));
        return new FittedModel(k, header.globalMean(), p, bu, q, bi, null, (BitSet) stored.knownUsers().clone(),
                (BitSet) stored.knownItems().clone(), settings, List.of());
    }
}
