package dev.twofold.trainer.evaluate;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.parallel.Workers;
import java.util.ArrayList;
import java.util.List;
import java.util.function.IntPredicate;

/**
 * Judges a scorer on held-out ratings.
 *
 * <ul>
 *   <li>RMSE and MAE of the predictions clamped to the rating scale, over every held-out rating.
 *   <li>Ranking, for every user with at least one relevant held-out rating (value ≥ the relevance
 *       threshold): all items the user did not rate in training are scored (no sampled candidates),
 *       the best k kept with a bounded heap, and precision@k, recall@k, nDCG@k and average
 *       precision@k computed against the user's relevant held-out items, then averaged over users.
 *       Catalogue coverage is the share of all {@code numItems} items that appear in some ranked
 *       user's top k.
 *   <li>Every figure also for the cold segment: users with at most {@code coldMaxRatings} training ratings.
 * </ul>
 *
 * Ranking is exact — every ranked user, every unrated item — and costs O(users·numItems·k_model)
 * multiply-adds per scorer. It is organised for speed without changing a figure: several scorers
 * (a model, its baselines, the live model) are ranked in one pass that shares the struck-out
 * training items and the buffers; users go in groups of {@value #USERS_PER_GROUP} and items in
 * blocks of {@value #ITEMS_PER_BLOCK}, a model scoring a block for the whole group as a blocked
 * matrix product ({@link FactorScorer}) whose scores are bit for bit those of
 * {@link dev.twofold.trainer.fit.FittedModel#scoreItems}; the heap looks at an item only when it
 * beats the current k-th score. Groups run in parallel; per-user figures land in per-user slots and
 * are summed in user order, so results do not depend on the thread count.
 */
public final class Evaluator {

    /** Users ranked together: each block of items is scored for all of them while it is in cache. */
    private static final int USERS_PER_GROUP = 16;
    /** Items scored at a time: one panel of a model's item factors ({@link FactorScorer#PANEL}). */
    private static final int ITEMS_PER_BLOCK = FactorScorer.PANEL;
    private static final int MIN_PARALLEL_USERS = 64;

    private final RatingMatrix train;
    private final RatingMatrix test;
    private final EvaluationSettings settings;
    /** Per user: held-out ratings at or above the relevance threshold. */
    private final int[] relevantCount;
    /** Users with at least one relevant held-out rating, ascending: the users ranking figures average over. */
    private final int[] rankedUsers;

    /**
     * @param train the training ratings (their items are excluded from a user's ranking)
     * @param test  the held-out ratings, over the same index space
     */
    public Evaluator(RatingMatrix train, RatingMatrix test, EvaluationSettings settings) {
        if (train.numUsers() != test.numUsers() || train.numItems() != test.numItems()) {
            throw new IllegalArgumentException("training matrix is " + train.numUsers() + " × " + train.numItems()
                    + " but the held-out matrix is " + test.numUsers() + " × " + test.numItems());
        }
        this.train = train;
        this.test = test;
        this.settings = settings;
        this.relevantCount = new int[test.numUsers()];
        int ranked = 0;
        for (int u = 0; u < test.numUsers(); u++) {
            for (int at = test.userStart()[u]; at < test.userStart()[u + 1]; at++) {
                if (test.userValues()[at] >= settings.relevance()) {
                    relevantCount[u]++;
                }
            }
            if (relevantCount[u] > 0) {
                ranked++;
            }
        }
        this.rankedUsers = new int[ranked];
        for (int u = 0, at = 0; u < test.numUsers(); u++) {
            if (relevantCount[u] > 0) {
                rankedUsers[at++] = u;
            }
        }
    }

    public EvaluationSettings settings() {
        return settings;
    }

    /** True when user u belongs to the cold segment. */
    public boolean isCold(int u) {
        return train.userCount(u) <= settings.coldMaxRatings();
    }

    /** How many users with held-out ratings are cold. */
    public int coldUsersWithHeldOut() {
        int c = 0;
        for (int u = 0; u < test.numUsers(); u++) {
            if (test.userCount(u) > 0 && isCold(u)) {
                c++;
            }
        }
        return c;
    }

    /** Error and ranking figures. */
    public SegmentFigures evaluate(Scorer scorer) {
        return errors(scorer).withRanking(ranking(scorer));
    }

    /** RMSE and MAE only (ranking figures NaN). */
    public SegmentFigures errors(Scorer scorer) {
        return new SegmentFigures(errors(scorer, u -> true), errors(scorer, this::isCold));
    }

    /** RMSE and MAE over the held-out ratings of the users the filter accepts. */
    public Figures errors(Scorer scorer, IntPredicate users) {
        int[] start = test.userStart();
        int[] items = test.userItems();
        float[] values = test.userValues();
        float lo = settings.scaleMin();
        float hi = settings.scaleMax();
        double squared = 0;
        double absolute = 0;
        int rows = 0;
        for (int u = 0; u < test.numUsers(); u++) {
            if (start[u] == start[u + 1] || !users.test(u)) {
                continue;
            }
            for (int at = start[u]; at < start[u + 1]; at++) {
                double s = scorer.score(u, items[at]);
                double prediction = s < lo ? lo : (s > hi ? hi : s);
                double e = values[at] - prediction;
                squared += e * e;
                absolute += Math.abs(e);
                rows++;
            }
        }
        if (rows == 0) {
            return Figures.EMPTY;
        }
        return new Figures(rows, Math.sqrt(squared / rows), absolute / rows, 0, Double.NaN, Double.NaN, Double.NaN,
                Double.NaN, Double.NaN);
    }

    /** Ranking figures only (errors NaN). */
    public SegmentFigures ranking(Scorer scorer) {
        return ranking(List.of(scorer)).get(0);
    }

    /**
     * Ranking figures of several scorers from one pass over the users and items: for each group of
     * users and each block of items, every scorer scores the block for the group, the items the users
     * rated in training are struck out once for all of them, and each (scorer, user) keeps its best k
     * in a bounded heap. The figures of each scorer are exactly those {@link #ranking(Scorer)} gives
     * for it alone.
     *
     * @return one entry per scorer, in order
     */
    public List<SegmentFigures> ranking(List<Scorer> scorers) {
        int count = scorers.size();
        int threads = settings.threads();
        Tally[] tallies = new Tally[count];
        for (int s = 0; s < count; s++) {
            tallies[s] = new Tally(rankedUsers.length, threads, test.numItems());
        }
        Scratch[] scratch = new Scratch[threads];
        for (int w = 0; w < threads; w++) {
            scratch[w] = new Scratch(count, settings.k());
        }
        try (Workers workers = new Workers(threads)) {
            workers.forEachChunk(rankedUsers.length, USERS_PER_GROUP, MIN_PARALLEL_USERS, (w, from, to) -> {
                for (int g = from; g < to; g += USERS_PER_GROUP) {
                    rankGroup(scorers, tallies, scratch[w], w, g, Math.min(to, g + USERS_PER_GROUP));
                }
            });
        }
        List<SegmentFigures> out = new ArrayList<>(count);
        for (Tally t : tallies) {
            out.add(new SegmentFigures(summarise(t, t.shown, u -> true), summarise(t, t.shownCold, this::isCold)));
        }
        return out;
    }

    /** Ranks users {@code rankedUsers[from..to)}, at most {@value #USERS_PER_GROUP} of them, for every scorer. */
    private void rankGroup(List<Scorer> scorers, Tally[] tallies, Scratch x, int w, int from, int to) {
        int count = to - from;
        int n = test.numItems();
        int[] start = train.userStart();
        int[] rated = train.userItems();
        for (int g = 0; g < count; g++) {
            int u = rankedUsers[from + g];
            x.users[g] = u;
            x.cursor[g] = start[u];
        }
        for (TopK[] heaps : x.heaps) {
            for (int g = 0; g < count; g++) {
                heaps[g].clear();
            }
        }
        for (int b = 0; b < n; b += ITEMS_PER_BLOCK) {
            int e = Math.min(n, b + ITEMS_PER_BLOCK);
            int width = e - b;
            for (int g = 0; g < count; g++) {
                int c = x.cursor[g];
                int last = start[x.users[g] + 1];
                while (c < last && rated[c] < e) {
                    c++;
                }
                x.end[g] = c;
            }
            for (int s = 0; s < scorers.size(); s++) {
                scorers.get(s).scoreBlock(x.users, count, b, e, x.block);
                for (int g = 0; g < count; g++) {
                    double[] row = x.block[g];
                    for (int c = x.cursor[g]; c < x.end[g]; c++) {
                        row[rated[c] - b] = Double.NaN;
                    }
                    x.heaps[s][g].offerAll(row, 0, width, b);
                }
            }
            System.arraycopy(x.end, 0, x.cursor, 0, count);
        }
        float relevance = settings.relevance();
        int k = settings.k();
        for (int s = 0; s < scorers.size(); s++) {
            Tally t = tallies[s];
            for (int g = 0; g < count; g++) {
                int u = x.users[g];
                int length = x.heaps[s][g].drainBestFirst(x.top);
                boolean cold = isCold(u);
                for (int r = 0; r < length; r++) {
                    int item = x.top[r];
                    x.hits[r] = test.get(u, item) >= relevance;
                    t.shown[w][item] = true;
                    if (cold) {
                        t.shownCold[w][item] = true;
                    }
                }
                int relevant = relevantCount[u];
                int at = from + g;
                t.precision[at] = RankingMetrics.precisionAt(x.hits, length, k);
                t.recall[at] = RankingMetrics.recallAt(x.hits, length, k, relevant);
                t.ndcg[at] = RankingMetrics.ndcgAt(x.hits, length, k, relevant);
                t.ap[at] = RankingMetrics.averagePrecisionAt(x.hits, length, k, relevant);
            }
        }
    }

    /** Per-user ranking figures of one scorer (indexed like {@code rankedUsers}) and the items it showed, per worker. */
    private static final class Tally {
        final double[] precision;
        final double[] recall;
        final double[] ndcg;
        final double[] ap;
        final boolean[][] shown;
        final boolean[][] shownCold;

        Tally(int users, int threads, int numItems) {
            precision = new double[users];
            recall = new double[users];
            ndcg = new double[users];
            ap = new double[users];
            shown = new boolean[threads][numItems];
            shownCold = new boolean[threads][numItems];
        }
    }

    /** One worker's buffers, reused for every group it ranks. */
    private static final class Scratch {
        final int[] users = new int[USERS_PER_GROUP];
        final int[] cursor = new int[USERS_PER_GROUP];
        final int[] end = new int[USERS_PER_GROUP];
        final double[][] block = new double[USERS_PER_GROUP][ITEMS_PER_BLOCK];
        final TopK[][] heaps;
        final int[] top;
        final boolean[] hits;

        Scratch(int scorers, int k) {
            heaps = new TopK[scorers][USERS_PER_GROUP];
            for (TopK[] row : heaps) {
                for (int g = 0; g < USERS_PER_GROUP; g++) {
                    row[g] = new TopK(k);
                }
            }
            top = new int[k];
            hits = new boolean[k];
        }
    }

    private Figures summarise(Tally t, boolean[][] shown, IntPredicate users) {
        int count = 0;
        double p = 0;
        double r = 0;
        double g = 0;
        double a = 0;
        for (int at = 0; at < rankedUsers.length; at++) {
            if (users.test(rankedUsers[at])) {
                count++;
                p += t.precision[at];
                r += t.recall[at];
                g += t.ndcg[at];
                a += t.ap[at];
            }
        }
        if (count == 0) {
            return Figures.EMPTY;
        }
        int n = test.numItems();
        int covered = 0;
        for (int i = 0; i < n; i++) {
            for (boolean[] worker : shown) {
                if (worker[i]) {
                    covered++;
                    break;
                }
            }
        }
        return new Figures(0, Double.NaN, Double.NaN, count, p / count, r / count, g / count, a / count,
                covered / (double) n);
    }
}
