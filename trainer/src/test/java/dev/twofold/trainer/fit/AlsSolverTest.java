package dev.twofold.trainer.fit;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

class AlsSolverTest {

    private static final FitSettings SHARED = FitSettings.defaults().withRank(4).withLambda(0.1f).withCoupling(Coupling.SHARED)
            .withTrust(0.5f, 5f);

    @Test
    void als_user_step_is_the_fold_in_against_the_final_item_and_trust_factors() {
        TrainingData data = RandomProblems.problem(50, 30, 0.2, 4, 41);
        FittedModel model = new AlsSolver().fit(data, SHARED.withEpochs(4));
        FoldIn foldIn = model.foldIn();
        FoldIn.Scratch scratch = foldIn.newScratch();
        RatingMatrix r = data.ratings();
        TrustGraph t = data.trust();
        int k = model.rank();
        float[] row = new float[k];
        for (int u = 0; u < r.numUsers(); u++) {
            assertTrue(foldIn.solve(r.userItems(), r.userValues(), r.userStart()[u], r.userStart()[u + 1], t.trustees(),
                    t.outWeights(), t.outStart()[u], t.outStart()[u + 1], scratch));
            scratch.copyFactors(row, 0);
            for (int a = 0; a < k; a++) {
                assertEquals(model.userFactors()[u * k + a], row[a], 0f, "user " + u + " factor " + a);
            }
            assertEquals(model.userBias()[u], (float) scratch.bias(), 0f, "user " + u + " bias");
        }
    }

    @Test
    void users_and_items_without_data_get_zero_rows_and_clear_known_bits() {
        // user 2 and item 3 have no ratings; user 2 trusts user 0 under shared coupling, user 3 nothing.
        RatingMatrix r = RatingMatrix.of(4, 4, new int[] {0, 0, 1, 1, 3}, new int[] {0, 1, 1, 2, 0},
                new float[] {5, 3, 4, 2, 1});
        TrustGraph t = TrustGraph.of(4, new int[] {2}, new int[] {0}, new float[] {1f});
        FittedModel shared = new AlsSolver().fit(new TrainingData(r, t, null), SHARED.withRank(2).withEpochs(3));
        assertTrue(shared.knownUsers().get(2), "a user with trust edges is known under shared coupling");
        assertFalse(shared.knownItems().get(3));
        assertEquals(0f, shared.itemFactors()[3 * 2]);
        assertEquals(0f, shared.itemBias()[3]);

        FittedModel none = new AlsSolver().fit(new TrainingData(r, t, null),
                SHARED.withRank(2).withEpochs(3).withCoupling(Coupling.NONE));
        assertFalse(none.knownUsers().get(2), "without coupling, trust alone teaches nothing");
        assertArrayEquals(new float[] {0f, 0f}, new float[] {none.userFactors()[4], none.userFactors()[5]});
        assertNull(none.trustFactors());
    }

    @Test
    void an_unsolvable_row_is_counted_and_keeps_its_values_instead_of_crashing() {
        // λ = 0 and an item rated once at rank 2: its 3×3 system (factors and bias) has rank 1.
        RatingMatrix r = RatingMatrix.of(3, 2, new int[] {0, 1, 2, 0}, new int[] {0, 0, 0, 1}, new float[] {4, 2, 5, 3});
        List<EpochReport> reports = new ArrayList<>();
        FittedModel model = new AlsSolver().fit(TrainingData.of(r),
                SHARED.withRank(2).withLambda(0f).withCoupling(Coupling.NONE).withEpochs(2), reports::add);
        assertTrue(reports.get(0).failedSolves() > 0);
        for (float f : model.itemFactors()) {
            assertTrue(Float.isFinite(f));
        }
    }

    @Test
    void early_stopping_keeps_the_epoch_with_the_best_validation_rmse() {
        TrainingData base = RandomProblems.problem(80, 50, 0.2, 3, 51);
        // validate on a few of the training cells with shifted values so RMSE soon stops improving
        RatingMatrix r = base.ratings();
        int rows = 40;
        int[] vu = new int[rows];
        int[] vi = new int[rows];
        float[] vv = new float[rows];
        for (int s = 0; s < rows; s++) {
            vu[s] = s;
            vi[s] = r.userItems()[r.userStart()[s]];
            vv[s] = Math.min(5f, r.userValues()[r.userStart()[s]] + 1f);
        }
        TrainingData data = new TrainingData(r, base.trust(), new ValidationSet(vu, vi, vv, 1f, 5f));
        List<EpochReport> reports = new ArrayList<>();
        // at SHARED's λ 0.1 the validation RMSE turns well before 60 epochs (measured: at epoch 24 with the
        // default bias prior, 46 without); at λ 0.01 with the bias prior it still creeps down at epoch 60
        FittedModel model = new AlsSolver().fit(data, SHARED.withEpochs(60).withPatience(2), reports::add);
        assertTrue(reports.size() < 60, "stopped early after " + reports.size() + " epochs");
        double best = reports.stream().mapToDouble(EpochReport::validationRmse).min().orElseThrow();
        assertEquals(best, data.validation().rmse(model), 1e-12);
    }

    @Test
    void refuses_data_without_ratings() {
        RatingMatrix empty = RatingMatrix.of(2, 2, new int[0], new int[0], new float[0]);
        IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
                () -> new AlsSolver().fit(TrainingData.of(empty), SHARED));
        assertTrue(e.getMessage().contains("no training ratings"));
    }
}
