package dev.twofold.trainer.publish;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertSame;

import dev.twofold.db.registry.ModelFactors;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import dev.twofold.trainer.fit.AlsSolver;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.FittedModel;
import dev.twofold.trainer.fit.TrainingData;
import java.time.Instant;
import org.junit.jupiter.api.Test;

class StoredModelTest {

    @Test
    void a_stored_model_scores_as_the_fitted_one_and_scores_newcomers_by_mean_and_item_bias() {
        RatingMatrix r = RatingMatrix.of(3, 3, new int[] {0, 0, 1, 2, 2}, new int[] {0, 1, 1, 0, 2},
                new float[] {5, 3, 4, 2, 1});
        TrustGraph t = TrustGraph.of(3, new int[] {0, 2}, new int[] {1, 0}, new float[] {1f, 0.5f});
        FittedModel model = new AlsSolver().fit(new TrainingData(r, t, null), FitSettings.defaults().withRank(2).withEpochs(3));
        float[] popularity = r.countAtLeast(4f);
        ModelFactors stored = StoredModel.factorsOf(model, popularity);
        assertSame(model.trustFactors(), stored.trustFactors());
        assertEquals(2f, stored.itemPopularity()[1] + stored.itemPopularity()[0]);

        ModelHeader header = new ModelHeader(7, "active", 2, "shared", 0.04f, 0.1f, 30f, 1f, 5f, model.globalMean(), 3, 3,
                Instant.EPOCH, Instant.EPOCH, "{}", "{}", "{}", null);
        FittedModel back = StoredModel.scorerOf(header, stored, 5, 4);
        for (int u = 0; u < 3; u++) {
            for (int i = 0; i < 3; i++) {
                assertEquals(model.score(u, i), back.score(u, i), 0.0);
            }
        }
        // user 4 and item 3 came after the model: μ + b_i for the new user, μ + b_u for the new item
        assertEquals(model.globalMean() + (double) model.itemBias()[1], back.score(4, 1), 1e-6);
        assertEquals(model.globalMean() + (double) model.userBias()[0], back.score(0, 3), 1e-6);
    }
}
