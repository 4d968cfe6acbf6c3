package dev.twofold.service.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.registry.ModelFactors;
import dev.twofold.db.snapshot.IdDirectory;
import dev.twofold.service.testing.KitchenModel;
import dev.twofold.service.testing.RandomModel;
import java.util.Arrays;
import org.junit.jupiter.api.Test;

class ServingModelTest {

    private final ServingModel model = KitchenModel.build();

    @Test
    void only_items_with_learned_factors_are_servable_and_keep_their_order() {
        assertEquals(KitchenModel.SERVABLE_ITEMS.length, model.numItems());
        for (int i = 0; i < KitchenModel.SERVABLE_ITEMS.length; i++) {
            assertEquals(i, model.itemIndex(KitchenModel.SERVABLE_ITEMS[i]));
            assertEquals(KitchenModel.SERVABLE_ITEMS[i], model.itemId(i));
        }
        assertEquals(-1, model.itemIndex("tart"), "trained without data");
        assertEquals(-1, model.itemIndex("jam"), "appeared after training");
        assertEquals(6 * KitchenModel.K, model.itemFactors().length);
        assertArrayEquals(Arrays.copyOf(KitchenModel.Q, 6 * KitchenModel.K), model.itemFactors());
        assertArrayEquals(Arrays.copyOf(KitchenModel.B_I, 6), model.itemBias());
    }

    @Test
    void users_are_found_by_id_and_only_trained_users_with_data_have_factors() {
        assertTrue(model.hasFactors(model.userIndex("ana")));
        assertTrue(model.hasFactors(model.userIndex("cy")));
        assertEquals(3, model.userIndex("dee"));
        assertFalse(model.hasFactors(3), "dee had no data at training");
        assertEquals(5, model.userIndex("eve"));
        assertFalse(model.hasFactors(5), "eve joined after training");
        assertEquals(-1, model.userIndex("zoe"));
        assertFalse(model.hasFactors(-1));
    }

    @Test
    void each_users_rated_items_are_the_servable_ones_sorted() {
        assertArrayEquals(new int[] {0, 4}, rated(model.userIndex("ana")), "tart is dropped: not servable");
        assertArrayEquals(new int[] {1}, rated(model.userIndex("ben")));
        assertArrayEquals(new int[] {}, rated(model.userIndex("cy")), "jam is dropped: not in the model");
        assertArrayEquals(new int[] {1, 3}, rated(model.userIndex("dee")));
        assertArrayEquals(new int[] {0}, rated(model.userIndex("eve")));
        assertArrayEquals(new int[] {}, rated(-1));
    }

    @Test
    void popularity_order_is_descending_with_ties_by_lower_index() {
        // popularity soup 50, cake 80, bread 20, salad 80, stew 5, pie 10
        assertArrayEquals(new int[] {1, 3, 0, 2, 5, 4}, model.popularityOrder());
    }

    @Test
    void a_model_whose_items_are_all_servable_shares_the_factor_arrays_without_copying() {
        RandomModel random = new RandomModel(5, 20, 30, 4, 3);
        assertSame(random.Q, random.model.itemFactors());
        assertSame(random.P, random.model.userFactors());
    }

    @Test
    void a_non_finite_factor_is_refused_naming_the_array_and_row() {
        ModelFactors good = KitchenModel.factors();
        float[] q = good.itemFactors().clone();
        q[2 * KitchenModel.K + 1] = Float.NaN;
        ModelFactors bad = new ModelFactors(good.rank(), good.userFactors(), good.userBias(), good.knownUsers(), q,
                good.itemBias(), good.itemPopularity(), good.knownItems(), null);
        IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> assemble(bad));
        assertTrue(e.getMessage().contains("Q") && e.getMessage().contains("row 2"), e.getMessage());
    }

    @Test
    void factors_that_do_not_fit_the_rank_are_refused() {
        ModelFactors good = KitchenModel.factors();
        ModelFactors bad = new ModelFactors(good.rank(), Arrays.copyOf(good.userFactors(), 5), good.userBias(),
                good.knownUsers(), good.itemFactors(), good.itemBias(), good.itemPopularity(), good.knownItems(), null);
        IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> assemble(bad));
        assertTrue(e.getMessage().contains("P has 5 values"), e.getMessage());
    }

    @Test
    void ratings_outside_the_directory_are_ignored() {
        ServingModel m = ServingModel.assemble(KitchenModel.header(), KitchenModel.factors(),
                new IdDirectory(KitchenModel.USER_IDS.clone(), KitchenModel.ITEM_IDS.clone()),
                new int[] {0, 99, -1}, new int[] {1, 1, 1});
        assertArrayEquals(new int[] {1}, Arrays.copyOfRange(m.ratedItems(), m.ratedStart(0), m.ratedEnd(0)));
        assertEquals(1, m.ratedItems().length);
    }

    private int[] rated(int user) {
        return Arrays.copyOfRange(model.ratedItems(), model.ratedStart(user), model.ratedEnd(user));
    }

    private static ServingModel assemble(ModelFactors factors) {
        return ServingModel.assemble(KitchenModel.header(), factors,
                new IdDirectory(KitchenModel.USER_IDS.clone(), KitchenModel.ITEM_IDS.clone()),
                KitchenModel.RATING_USER.clone(), KitchenModel.RATING_ITEM.clone());
    }
}
