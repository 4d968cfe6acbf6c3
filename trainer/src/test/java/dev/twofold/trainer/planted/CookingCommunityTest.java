package dev.twofold.trainer.planted;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import java.util.Arrays;
import java.util.stream.IntStream;
import org.junit.jupiter.api.Test;

class CookingCommunityTest {

    /** Over a few thousand ratings the uniform rounding error's RMSE is good to about ±0.0005; allow 0.002. */
    private static final double ROUNDING_SAMPLE_TOLERANCE = 0.002;
    private static final CommunitySpec SMALL = CommunitySpec.defaults().withSize(400, 120);

    @Test
    void the_same_seed_gives_the_same_community_and_another_seed_another() {
        PlantedCommunity a = CookingCommunity.generate(SMALL);
        PlantedCommunity b = CookingCommunity.generate(SMALL);
        assertArrayEquals(a.ratingUser(), b.ratingUser());
        assertArrayEquals(a.ratingItem(), b.ratingItem());
        assertArrayEquals(a.rating(), b.rating());
        assertArrayEquals(a.ratingTime(), b.ratingTime());
        assertArrayEquals(a.trueScore(), b.trueScore());
        assertArrayEquals(a.trustee(), b.trustee());
        PlantedCommunity c = CookingCommunity.generate(SMALL.withSeed(8));
        assertFalse(Arrays.equals(a.rating(), c.rating()));
    }

    @Test
    void ids_name_cooks_and_recipes() {
        PlantedCommunity a = CookingCommunity.generate(SMALL);
        assertEquals("cook-00042", a.cookId(42));
        assertEquals("recipe-0107", a.recipeId(107));
    }

    @Test
    void ratings_are_whole_stars_with_one_per_pair_and_the_truth_behind_each() {
        PlantedCommunity a = CookingCommunity.generate(SMALL);
        for (int p = 0; p < a.numRatings(); p++) {
            float r = a.rating()[p];
            assertTrue(r >= 1 && r <= 5 && r == Math.rint(r), "rating " + r);
            assertEquals(a.trueScore(a.ratingUser()[p], a.ratingItem()[p]), a.trueScore()[p], 1e-12);
        }
        // building the matrix refuses repeated pairs, so this also checks there are none
        RatingMatrix.of(a.numCooks(), a.numRecipes(), a.ratingUser(), a.ratingItem(), a.rating());
        TrustGraph.of(a.numCooks(), a.truster(), a.trustee(), a.trustWeight());
    }

    @Test
    void newcomers_rate_one_to_three_recipes_but_follow_several_cooks_mostly_of_their_community() {
        PlantedCommunity a = CookingCommunity.generate(SMALL);
        RatingMatrix r = RatingMatrix.of(a.numCooks(), a.numRecipes(), a.ratingUser(), a.ratingItem(), a.rating());
        TrustGraph t = TrustGraph.of(a.numCooks(), a.truster(), a.trustee(), a.trustWeight());
        int newcomers = 0;
        int newcomerFollows = 0;
        for (int u = 0; u < a.numCooks(); u++) {
            if (a.isNewcomer(u)) {
                newcomers++;
                newcomerFollows += t.outDegree(u);
                assertTrue(r.userCount(u) >= 1 && r.userCount(u) <= 3, "newcomer " + u + " has " + r.userCount(u));
            } else {
                assertTrue(r.userCount(u) >= 4, "regular cook " + u + " has " + r.userCount(u));
            }
        }
        assertTrue(newcomers > 0.08 * a.numCooks() && newcomers < 0.22 * a.numCooks(), newcomers + " newcomers");
        assertTrue(newcomerFollows / (double) newcomers >= 5, "newcomers follow several cooks");
        int inside = 0;
        for (int e = 0; e < a.numFollows(); e++) {
            if (a.community(a.truster()[e]) == a.community(a.trustee()[e])) {
                inside++;
            }
        }
        // 85% of follows aim inside the community (plus chance hits): at least 80% land there
        assertTrue(inside >= 0.80 * a.numFollows(), inside + " of " + a.numFollows() + " follows inside");
    }

    @Test
    void ratings_per_cook_are_long_tailed() {
        PlantedCommunity a = CookingCommunity.generate(CommunitySpec.defaults().withSize(1000, 300));
        RatingMatrix r = RatingMatrix.of(a.numCooks(), a.numRecipes(), a.ratingUser(), a.ratingItem(), a.rating());
        int[] counts = new int[a.numCooks()];
        for (int u = 0; u < counts.length; u++) {
            counts[u] = r.userCount(u);
        }
        Arrays.sort(counts);
        int median = counts[counts.length / 2];
        int top = counts[counts.length * 99 / 100];
        assertTrue(top >= 2.5 * median, "99th percentile " + top + " vs median " + median);
    }

    @Test
    void noise_floor_without_noise_is_only_the_rounding_to_one_decimal() {
        PlantedCommunity a = CookingCommunity.generate(SMALL.withNoise(0).withWholeStars(false));
        int[] inside = IntStream.range(0, a.numRatings())
                .filter(p -> a.trueScore()[p] >= 1 && a.trueScore()[p] <= 5).toArray();
        int[] outside = IntStream.range(0, a.numRatings())
                .filter(p -> a.trueScore()[p] < 1 || a.trueScore()[p] > 5).toArray();
        assertTrue(inside.length > 1000 && outside.length > 0);
        // inside the scale, rounding to 0.1 leaves an error uniform on ±0.05: RMSE 0.05/√3 = 0.0289
        assertEquals(0.05 / Math.sqrt(3), a.noiseFloorRmse(inside), ROUNDING_SAMPLE_TOLERANCE);
        // beyond the scale both the rating and the clamped truth sit on the bound
        assertEquals(0.0, a.noiseFloorRmse(outside), 0.0);
    }
}
