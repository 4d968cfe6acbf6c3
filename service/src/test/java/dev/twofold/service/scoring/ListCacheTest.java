package dev.twofold.service.scoring;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.service.model.ServingModel;
import dev.twofold.service.testing.RandomModel;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import net.jqwik.api.ForAll;
import net.jqwik.api.Property;
import net.jqwik.api.constraints.IntRange;
import org.junit.jupiter.api.Test;

/**
 * A kept list answers exactly what ranking afresh would (over random models, users, counts and
 * exclusions: jqwik, fixed seed), the budget bounds how many users are kept, and users sharing a
 * slot replace each other without ever being answered with the other's list.
 */
class ListCacheTest {

    private final Ranker ranker = new Ranker();

    @Property(tries = 120, seed = "20261202")
    void kept_lists_answer_exactly_what_ranking_afresh_answers(
            @ForAll @IntRange(min = 0, max = 1_000_000) int modelSeed,
            @ForAll @IntRange(min = 1, max = 32) int rank,
            @ForAll @IntRange(min = 1, max = 300) int items,
            @ForAll @IntRange(min = 0, max = 30) int ratingsPerUser) {
        RandomModel m = new RandomModel(modelSeed, 12, items, rank, ratingsPerUser);
        ListCache.Stats stats = new ListCache.Stats();
        ListCache lists = new ListCache(m.model.userIndexSpace(), 1 << 20, stats);
        SplittableRandom random = new SplittableRandom(modelSeed);
        long cacheable = 0;
        for (int ask = 0; ask < 3 * m.users; ask++) {
            int user = random.nextInt(m.users);
            int count = 1 + random.nextInt(40); // some beyond what a kept list holds
            List<String> exclude = new ArrayList<>();
            for (int e = random.nextInt(8); e > 0; e--) {
                exclude.add(random.nextInt(10) == 0 ? "not-in-the-model" : m.itemIds[random.nextInt(items)]);
            }
            int u = m.model.userIndex(m.userIds[user]);
            Recommendation got = ScoringEngine.await(ranker.recommendLater(m.model, UserVector.fromModel(m.model, u),
                    u, count, exclude, lists));
            Recommendation want = ranker.recommend(m.model, m.userIds[user], count, exclude);
            assertArrayEquals(want.items(), got.items(), "user " + user + ", count " + count + ", exclude " + exclude);
            assertArrayEquals(want.scores(), got.scores(), 1e-6f);
            assertEquals(want.strategy(), got.strategy());
            if (count + knownDistinct(m.model, exclude) <= ListCache.DEPTH) {
                cacheable++;
            }
        }
        assertEquals(cacheable, stats.hits() + stats.misses(), "every request a kept list could answer is counted");
        assertTrue(stats.misses() <= m.users, "each user is scored for the cache at most once: " + stats.misses());
    }

    @Test
    void the_budget_bounds_the_users_kept_and_zero_keeps_none() {
        ListCache.Stats stats = new ListCache.Stats();
        assertEquals(10, new ListCache(1_000, 10L * ListCache.ENTRY_BYTES + ListCache.ENTRY_BYTES - 1, stats).slots());
        assertEquals(7, new ListCache(7, 1L << 20, stats).slots(), "never more slots than users");
        ListCache none = new ListCache(1_000, 0, stats);
        assertEquals(0, none.slots());
        RandomModel m = new RandomModel(3, 4, 50, 4, 5);
        int u = m.model.userIndex(m.userIds[1]);
        for (int ask = 0; ask < 3; ask++) {
            Recommendation got = ScoringEngine.await(ranker.recommendLater(m.model, UserVector.fromModel(m.model, u),
                    u, 10, List.of(), none));
            assertArrayEquals(ranker.recommend(m.model, m.userIds[1], 10, List.of()).items(), got.items());
        }
        assertEquals(0, stats.hits() + stats.misses(), "a cache of no slots is never consulted");
    }

    @Test
    void users_sharing_a_slot_replace_each_other_are_never_answered_with_the_others_list_and_can_be_dropped() {
        ListCache.Stats stats = new ListCache.Stats();
        ListCache lists = new ListCache(100, 2L * ListCache.ENTRY_BYTES, stats);
        assertEquals(2, lists.slots());
        lists.put(3, new int[] {7, 8, 9}, new float[] {4.5f, 4f, 3f});
        assertArrayEquals(new int[] {7, 9}, lists.get(3, Strategy.MODEL, 2, new int[] {8}).items());
        assertArrayEquals(new float[] {4.5f, 3f}, lists.get(3, Strategy.MODEL, 2, new int[] {8}).scores());
        lists.put(5, new int[] {1}, new float[] {2f}); // slot 1 as well
        assertNull(lists.get(3, Strategy.MODEL, 2, new int[0]), "replaced by user 5");
        assertArrayEquals(new int[] {1}, lists.get(5, Strategy.TRUST, 10, new int[0]).items(),
                "a list shorter than the depth holds every unrated item: complete");
        assertEquals(Strategy.TRUST, lists.get(5, Strategy.TRUST, 10, new int[0]).strategy());
        assertNull(lists.get(4, Strategy.MODEL, 1, new int[0]), "slot 0 is empty");
        assertEquals(4, stats.hits());
        assertEquals(2, stats.misses());
        lists.drop(3); // not the one kept in its slot: nothing happens
        assertEquals(1, lists.get(5, Strategy.MODEL, 1, new int[0]).size());
        lists.drop(5);
        assertNull(lists.get(5, Strategy.MODEL, 1, new int[0]), "dropped");
    }

    @Test
    void a_full_depth_list_that_skipping_leaves_short_is_a_miss_not_a_short_answer() {
        ListCache lists = new ListCache(10, 10L * ListCache.ENTRY_BYTES, new ListCache.Stats());
        int[] items = new int[ListCache.DEPTH];
        float[] scores = new float[ListCache.DEPTH];
        int[] skip = new int[3];
        for (int j = 0; j < items.length; j++) {
            items[j] = j;
            scores[j] = 5f - j / 10f;
        }
        for (int j = 0; j < skip.length; j++) {
            skip[j] = j;
        }
        lists.put(1, items, scores);
        assertEquals(ListCache.DEPTH - 3, lists.get(1, Strategy.MODEL, ListCache.DEPTH - 3, skip).size());
        assertNull(lists.get(1, Strategy.MODEL, ListCache.DEPTH - 2, skip),
                "items below the kept ones may come next: score afresh");
    }

    private static int knownDistinct(ServingModel model, List<String> ids) {
        return (int) ids.stream().filter(id -> model.itemIndex(id) >= 0).distinct().count();
    }
}
