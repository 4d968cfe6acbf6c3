package dev.twofold.service.scoring;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.service.testing.RandomModel;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.List;
import java.util.Set;
import java.util.SplittableRandom;
import net.jqwik.api.ForAll;
import net.jqwik.api.Property;
import net.jqwik.api.constraints.IntRange;

/**
 * Properties of every ranked list, over random models, users, counts and exclusions (jqwik, fixed
 * seed): no rated or excluded item is ever returned; every score is μ + b_u + b_i + p_u·q_i,
 * clamped, computed here independently in double precision; the list is the best: descending,
 * and nothing left out scores above its last item; and it is as long as it can be.
 */
class RankingPropertiesTest {

    /** Float32 sums of k ≤ 64 products against the double reference, on predictions of order 10. */
    private static final double SCORE_TOLERANCE = 2e-5;

    private final Ranker ranker = new Ranker();

    @Property(tries = 150, seed = "20261201")
    void rated_and_excluded_items_never_appear_and_scores_are_the_formula(
            @ForAll @IntRange(min = 0, max = 1_000_000) int modelSeed,
            @ForAll @IntRange(min = 1, max = 64) int rank,
            @ForAll @IntRange(min = 1, max = 400) int items,
            @ForAll @IntRange(min = 0, max = 30) int ratingsPerUser,
            @ForAll @IntRange(min = 1, max = 1000) int count,
            @ForAll @IntRange(min = 0, max = 12) int excluded) {
        RandomModel m = new RandomModel(modelSeed, 12, items, rank, ratingsPerUser);
        SplittableRandom random = new SplittableRandom(modelSeed);
        for (int user = 0; user < m.users; user++) {
            List<String> exclude = new ArrayList<>();
            Set<Integer> left = new HashSet<>();
            for (int e = 0; e < excluded; e++) {
                int item = random.nextInt(items);
                exclude.add(m.itemIds[item]);
                left.add(item);
            }
            Recommendation rec = ranker.recommend(m.model, m.userIds[user], count, exclude);
            assertEquals(Strategy.MODEL, rec.strategy());

            int eligible = 0;
            for (int i = 0; i < items; i++) {
                if (!m.rated(user, i) && !left.contains(i)) {
                    eligible++;
                }
            }
            assertEquals(Math.min(count, eligible), rec.size(), "as many as asked, or all that are left");

            Set<Integer> returned = new HashSet<>();
            double lastRaw = Double.POSITIVE_INFINITY;
            for (int j = 0; j < rec.size(); j++) {
                int item = rec.items()[j];
                assertTrue(returned.add(item), "no item twice");
                assertFalse(m.rated(user, item), "rated item " + item + " returned to user " + user);
                assertFalse(left.contains(item), "excluded item " + item + " returned");
                double raw = m.rawPrediction(user, item);
                assertEquals(Math.max(1, Math.min(5, raw)), rec.scores()[j], SCORE_TOLERANCE, "score of item " + item);
                assertTrue(raw <= lastRaw + SCORE_TOLERANCE, "descending by prediction");
                lastRaw = raw;
            }
            if (rec.size() > 0) {
                for (int i = 0; i < items; i++) {
                    if (!returned.contains(i) && !m.rated(user, i) && !left.contains(i)) {
                        assertTrue(m.rawPrediction(user, i) <= lastRaw + SCORE_TOLERANCE,
                                "item " + i + " left out scores above the last returned");
                    }
                }
            }
        }
    }
}
