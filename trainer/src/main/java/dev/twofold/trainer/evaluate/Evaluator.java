package dev.twofold.trainer.evaluate;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.parallel.Workers;
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
 * Ranking costs O(users·numItems·k_model) and runs in parallel over users; per-user figures are summed
 * in user order, so results do not depend on the thread count.
 */
public final class Evaluator {

    private static final int USERS_PER_CHUNK = 32;
    private static final int MIN_PARALLEL_USERS = 64;

    private final RatingMatrix train;
    private final RatingMatrix test;
    private final EvaluationSettings settings;

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
        int m = test.numUsers();
        int n = test.numItems();
        int k = settings.k();
        double[] precision = new double[m];
        double[] recall = new double[m];
        double[] ndcg = new double[m];
        double[] ap = new double[m];
        boolean[] ranked = new boolean[m];
        int threads = settings.threads();
        boolean[][] shown = new boolean[threads][n];
        boolean[][] shownCold = new boolean[threads][n];
        double[][] scores = new double[threads][n];
        TopK[] heaps = new TopK[threads];
        int[][] tops = new int[threads][k];
        boolean[][] hits = new boolean[threads][k];
        for (int w = 0; w < threads; w++) {
            heaps[w] = new TopK(k);
        }
        float relevance = settings.relevance();
        try (Workers workers = new Workers(threads)) {
            workers.forEachChunk(m, USERS_PER_CHUNK, MIN_PARALLEL_USERS, (w, from, to) -> {
                for (int u = from; u < to; u++) {
                    int relevant = 0;
                    for (int at = test.userStart()[u]; at < test.userStart()[u + 1]; at++) {
                        if (test.userValues()[at] >= relevance) {
                            relevant++;
                        }
                    }
                    if (relevant == 0) {
                        continue;
                    }
                    double[] s = scores[w];
                    scorer.scoreItems(u, s);
                    for (int at = train.userStart()[u]; at < train.userStart()[u + 1]; at++) {
                        s[train.userItems()[at]] = Double.NaN;
                    }
                    TopK heap = heaps[w];
                    heap.clear();
                    for (int i = 0; i < n; i++) {
                        heap.offer(i, s[i]);
                    }
                    int length = heap.drainBestFirst(tops[w]);
                    boolean cold = isCold(u);
                    for (int r = 0; r < length; r++) {
                        int item = tops[w][r];
                        hits[w][r] = test.get(u, item) >= relevance;
                        shown[w][item] = true;
                        if (cold) {
                            shownCold[w][item] = true;
                        }
                    }
                    ranked[u] = true;
                    precision[u] = RankingMetrics.precisionAt(hits[w], length, k);
                    recall[u] = RankingMetrics.recallAt(hits[w], length, k, relevant);
                    ndcg[u] = RankingMetrics.ndcgAt(hits[w], length, k, relevant);
                    ap[u] = RankingMetrics.averagePrecisionAt(hits[w], length, k, relevant);
                }
            });
        }
        return new SegmentFigures(
                summarise(ranked, precision, recall, ndcg, ap, shown, u -> true),
                summarise(ranked, precision, recall, ndcg, ap, shownCold, this::isCold));
    }

    private Figures summarise(boolean[] ranked, double[] precision, double[] recall, double[] ndcg, double[] ap,
            boolean[][] shown, IntPredicate users) {
        int count = 0;
        double p = 0;
        double r = 0;
        double g = 0;
        double a = 0;
        for (int u = 0; u < ranked.length; u++) {
            if (ranked[u] && users.test(u)) {
                count++;
                p += precision[u];
                r += recall[u];
                g += ndcg[u];
                a += ap[u];
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
