package dev.twofold.service.fresh;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.snapshot.UserHistory;
import dev.twofold.service.model.ServingModel;
import dev.twofold.service.scoring.Ranker;
import dev.twofold.service.scoring.Recommendation;
import dev.twofold.service.scoring.Strategy;
import dev.twofold.service.scoring.UserVector;
import dev.twofold.service.testing.KitchenModel;
import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import java.time.ZoneOffset;
import java.util.Arrays;
import java.util.List;
import org.junit.jupiter.api.Test;

/** What happens to folded-in users when they write again, when there are too many, and when the model changes. */
class LiveModelsTest {

    private static final Instant JANUARY = Instant.parse("2026-01-01T00:00:00Z");

    /** A clock the test moves. */
    private static final class TestClock extends Clock {
        Instant now = JANUARY;

        @Override
        public Instant instant() {
            return now;
        }

        @Override
        public java.time.ZoneId getZone() {
            return ZoneOffset.UTC;
        }

        @Override
        public Clock withZone(java.time.ZoneId zone) {
            return this;
        }
    }

    /** ana (user 0) rated soup (item 0) and cake (item 1); directory indices of KitchenModel. */
    private static UserHistory ana(float cakeRating) {
        return new UserHistory("ana", 0, new int[] {0, 1}, new float[] {5f, cakeRating}, new int[0], new float[0]);
    }

    private static UserHistory newcomer(String id, int index) {
        return new UserHistory(id, index, new int[] {2}, new float[] {4f}, new int[0], new float[0]);
    }

    @Test
    void a_folded_user_is_served_from_their_new_vector_with_the_new_item_excluded() {
        LiveModels live = new LiveModels(10, 0, new TestClock());
        ServingModel model = KitchenModel.build();
        live.install(model);
        assertEquals(1, live.foldIn(List.of(ana(1f))));
        UserVector ana = live.current().user("ana");
        assertEquals(Strategy.MODEL, ana.strategy());
        assertTrue(ana.factors() != model.userFactors(), "its own vector");
        assertEquals(2, ana.ratedTo() - ana.ratedFrom());
        assertEquals(0, ana.rated()[ana.ratedFrom()]);
        assertEquals(1, ana.rated()[ana.ratedFrom() + 1], "cake, rated since training, is excluded now");
    }

    @Test
    void a_later_write_replaces_an_earlier_one_and_an_erased_user_is_forgotten() {
        LiveModels live = new LiveModels(10, 0, new TestClock());
        live.install(KitchenModel.build());
        live.foldIn(List.of(ana(1f)));
        FreshUser first = live.current().fresh().get("ana");
        live.foldIn(List.of(ana(5f)));
        FreshUser second = live.current().fresh().get("ana");
        assertTrue(second.sequence() > first.sequence());
        assertTrue(second.vector().bias() > first.vector().bias(), "loving the cake raised ana's bias");
        live.foldIn(List.of(UserHistory.unknown("ana")));
        assertNull(live.current().fresh().get("ana"));
    }

    @Test
    void an_erased_user_is_served_as_unknown_until_a_model_loaded_after_the_erasure() {
        TestClock clock = new TestClock();
        LiveModels live = new LiveModels(10, 0, clock);
        live.install(KitchenModel.build(1, JANUARY, 1f));
        live.foldIn(List.of(ana(1f)));
        clock.now = Instant.parse("2026-02-01T00:00:00Z");
        live.forget("ana");
        live.forget("cy");
        assertNull(live.current().fresh().get("ana"));
        for (String id : new String[] {"ana", "cy"}) {
            UserVector erased = live.current().user(id);
            assertEquals(Strategy.POPULAR, erased.strategy());
            assertEquals(0, erased.ratedTo() - erased.ratedFrom(), "nothing of theirs is kept");
        }
        live.install(KitchenModel.build(2, Instant.parse("2026-02-01T00:03:00Z"), 1f));
        assertEquals(Strategy.POPULAR, live.current().user("cy").strategy(), "that model may predate the erasure");
        live.install(KitchenModel.build(3, Instant.parse("2026-03-01T00:00:00Z"), 1f));
        assertEquals(Strategy.MODEL, live.current().user("cy").strategy(), "a later model knows what is stored");
    }

    @Test
    void a_kept_list_is_never_read_for_a_user_folded_in_or_erased_since_and_a_new_model_keeps_none() {
        LiveModels live = new LiveModels(10, 1 << 20, new TestClock());
        ServingModel model = KitchenModel.build();
        live.install(model);
        Ranker ranker = new Ranker();
        List<String> first = ids(model, live.current().recommendLater(ranker, "ana", 10, List.of()).join());
        assertTrue(first.contains("cake"), "ana has not rated cake in the model: " + first);
        assertEquals(first, ids(model, live.current().recommendLater(ranker, "ana", 10, List.of()).join()));
        assertEquals(1, live.listStats().hits(), "asked again: answered from the kept list");

        live.foldIn(List.of(ana(1f)));
        List<String> folded = ids(model, live.current().recommendLater(ranker, "ana", 10, List.of()).join());
        assertFalse(folded.contains("cake"), "rated since the model was trained: " + folded);
        assertEquals(1, live.listStats().hits(), "a folded user is ranked afresh");

        live.forget("ana");
        assertEquals(Strategy.POPULAR, live.current().recommendLater(ranker, "ana", 10, List.of()).join().strategy());
        assertEquals(1, live.listStats().hits(), "an erased user is served as unknown");

        live.current().recommendLater(ranker, "ben", 10, List.of()).join();
        long misses = live.listStats().misses();
        live.install(KitchenModel.build(2, JANUARY.plus(Duration.ofDays(1)), 1f));
        live.current().recommendLater(ranker, "ben", 10, List.of()).join();
        assertEquals(misses + 1, live.listStats().misses(), "the new model has kept nothing yet");
        assertEquals(1, live.listStats().hits());
    }

    private static List<String> ids(ServingModel model, Recommendation rec) {
        return Arrays.stream(rec.items()).mapToObj(model::itemId).toList();
    }

    @Test
    void beyond_the_capacity_the_user_folded_longest_ago_is_dropped() {
        LiveModels live = new LiveModels(2, 0, new TestClock());
        live.install(KitchenModel.build());
        live.foldIn(List.of(newcomer("fay", 6)));
        live.foldIn(List.of(newcomer("gus", 7)));
        live.foldIn(List.of(newcomer("fay", 6)));
        live.foldIn(List.of(newcomer("hal", 8)));
        FreshUsers fresh = live.current().fresh();
        assertEquals(2, fresh.size());
        assertNull(fresh.get("gus"), "gus was folded longest ago");
        assertNotNull(fresh.get("fay"));
        assertNotNull(fresh.get("hal"));
    }

    @Test
    void a_new_model_keeps_users_written_after_its_snapshot_re_solved_and_drops_those_it_already_learned() {
        TestClock clock = new TestClock();
        LiveModels live = new LiveModels(10, 0, clock);
        live.install(KitchenModel.build(1, JANUARY, 1f));

        clock.now = Instant.parse("2026-02-01T00:00:00Z");
        live.foldIn(List.of(ana(1f)));
        ServingModel march = KitchenModel.build(2, Instant.parse("2026-03-01T00:00:00Z"), 1f);
        assertEquals(1, live.install(march).orElseThrow().id());
        assertNull(live.current().fresh().get("ana"), "the March model was trained on ana's February rating");
        assertSame(march.userFactors(), live.current().user("ana").factors());

        Instant written = Instant.parse("2026-03-05T00:00:00Z");
        clock.now = written;
        live.foldIn(List.of(newcomer("fay", 6)));
        UserVector underMarch = live.current().user("fay");
        assertEquals(Strategy.MODEL, underMarch.strategy());
        // created a few minutes after the write: its snapshot may predate it
        ServingModel later = KitchenModel.build(3, written.plus(Duration.ofMinutes(5)), 2f);
        live.install(later);
        FreshUser kept = live.current().fresh().get("fay");
        assertNotNull(kept, "written within the margin before the new model: kept");
        UserVector expected = FoldedVectors.fold(later, kept.history(), later.foldIn().newScratch());
        for (int x = 0; x < later.rank(); x++) {
            assertEquals(expected.factors()[x], kept.vector().factors()[x], "re-solved against the new item factors");
        }
        assertTrue(kept.vector().factors()[0] != underMarch.factors()[0], "Q doubled, so p changed");
    }
}
