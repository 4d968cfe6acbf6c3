package dev.twofold.trainer.planted;

import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import dev.twofold.trainer.evaluate.EvaluationSettings;
import dev.twofold.trainer.evaluate.Evaluator;
import dev.twofold.trainer.evaluate.Figures;
import dev.twofold.trainer.evaluate.Scorer;
import dev.twofold.trainer.fit.AlsSolver;
import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.FittedModel;
import dev.twofold.trainer.fit.TrainingData;
import dev.twofold.trainer.split.PerUserHoldout;
import dev.twofold.trainer.split.Split;
import java.util.Arrays;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/**
 * The default model recovers a planted cooking community: 800 cooks × 250 recipes (about 26,000
 * ratings), 20% of each cook's ratings held out, default fit settings.
 */
class PlantedRecoveryTest {

    /** The model must cut the global mean's held-out RMSE by at least a quarter (measured: 29%). */
    private static final double MIN_GAIN_OVER_GLOBAL_MEAN = 0.25;
    /**
     * Warm cooks (≥ 15 training ratings): RMSE within this factor of the noise floor. The product's
     * target is 1.20 (docs/benchmarks.md measures about 1.10 at benchmark size); the test guards it.
     */
    private static final double WARM_RATIO_TO_NOISE_FLOOR = 1.20;
    /**
     * Cooks with ≤ 3 training ratings: the default (neighbour) coupling must cut their RMSE against
     * the same model without trust by this much. The product's target is 20%, measured on larger
     * communities in docs/benchmarks.md; this community has only a few dozen such rows, so the test
     * guards a clear 10%.
     */
    private static final double MIN_COLD_CUT = 0.10;
    private static final int WARM_MIN_RATINGS = 15;
    private static final int COLD_MAX_RATINGS = 3;

    private static PlantedCommunity community;
    private static RatingMatrix train;
    private static Evaluator evaluator;
    private static int[] testRows;
    private static FittedModel coupled;
    private static FittedModel none;

    @BeforeAll
    static void fit() {
        community = CookingCommunity.generate(CommunitySpec.defaults().withSize(800, 250));
        int m = community.numCooks();
        int n = community.numRecipes();
        Split split = new PerUserHoldout(0.2, 1).split(m, community.ratingUser(), community.ratingItem(), null);
        testRows = split.test();
        train = RatingMatrix.of(m, n, community.ratingUser(), community.ratingItem(), community.rating(), split.train());
        RatingMatrix test = RatingMatrix.of(m, n, community.ratingUser(), community.ratingItem(), community.rating(), testRows);
        TrustGraph trust = TrustGraph.of(m, community.truster(), community.trustee(), community.trustWeight());
        TrainingData data = new TrainingData(train, trust, null);
        evaluator = new Evaluator(train, test, EvaluationSettings.defaults(1f, 5f));
        coupled = new AlsSolver().fit(data, FitSettings.defaults());
        none = new AlsSolver().fit(data, FitSettings.defaults().withCoupling(Coupling.NONE));
    }

    @Test
    void held_out_rmse_is_far_below_the_global_mean_baseline() {
        double model = evaluator.errors(Scorer.of(coupled)).overall().rmse();
        double mean = evaluator.errors(Scorer.constant(train.mean())).overall().rmse();
        assertTrue(model <= (1 - MIN_GAIN_OVER_GLOBAL_MEAN) * mean, "model " + model + " vs global mean " + mean);
    }

    @Test
    void precision_at_ten_beats_recommending_the_most_popular_recipes() {
        Figures model = evaluator.ranking(Scorer.of(coupled)).overall();
        Figures popular = evaluator.ranking(Scorer.byItem(train.countAtLeast(4f))).overall();
        assertTrue(model.precision() > popular.precision(),
                "model " + model.precision() + " vs most popular " + popular.precision());
    }

    @Test
    void warm_cooks_are_predicted_close_to_the_noise_floor() {
        double model = evaluator.errors(Scorer.of(coupled), u -> train.userCount(u) >= WARM_MIN_RATINGS).rmse();
        int[] warmRows = Arrays.stream(testRows)
                .filter(p -> train.userCount(community.ratingUser()[p]) >= WARM_MIN_RATINGS).toArray();
        double floor = community.noiseFloorRmse(warmRows);
        assertTrue(model <= WARM_RATIO_TO_NOISE_FLOOR * floor, "warm RMSE " + model + " vs noise floor " + floor);
    }

    @Test
    void trust_coupling_lowers_the_error_for_cooks_with_few_ratings() {
        double withTrust = evaluator.errors(Scorer.of(coupled), u -> train.userCount(u) <= COLD_MAX_RATINGS).rmse();
        double alone = evaluator.errors(Scorer.of(none), u -> train.userCount(u) <= COLD_MAX_RATINGS).rmse();
        assertTrue(withTrust <= (1 - MIN_COLD_CUT) * alone, "cold RMSE with trust " + withTrust + " vs without " + alone);
    }
}
