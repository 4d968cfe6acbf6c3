package dev.twofold.service.scoring;

import dev.twofold.service.model.ServingModel;
import java.util.Arrays;
import java.util.List;
import java.util.concurrent.CompletableFuture;

/**
 * Ranks the items a user has not rated, and finds items similar to an item.
 *
 * <p>A user with a factor vector ({@link Strategy#MODEL}: their own, learned or folded in;
 * {@link Strategy#TRUST}: built from the users they trust) gets the items with the highest
 * r̂(u,i) = μ + b_u + b_i + x_u·q_i, scored by the {@link ScoringEngine} (every item, batched with
 * concurrent requests) and kept by a bounded heap, O(n·k + n·log count). Items are ranked by the
 * unclamped prediction, so an item predicted above the top of the scale still ranks above one
 * predicted just at the top; the scores reported are clamped to the scale. Equal predictions rank
 * the lower serving item index first.
 *
 * <p>Anyone else ({@link Strategy#POPULAR}) gets the model's popularity order, scored μ + b_i, the
 * prediction for a user about whom nothing is known.
 *
 * <p>A user the model alone knows can be answered from a {@link ListCache} of their list instead:
 * the same items and scores, without scoring every item again.
 *
 * <p>Either way the user's rated items and the request's excluded items never appear. Excluded
 * ids the model does not know are ignored. Thread-safe.
 */
public final class Ranker {

    private final ScoringEngine engine;

    public Ranker() {
        this(new ScoringEngine());
    }

    public Ranker(ScoringEngine engine) {
        this.engine = engine;
    }

    /** The engine that scores items, for the start-up log. */
    public ScoringEngine engine() {
        return engine;
    }

    /** {@link #recommend(ServingModel, UserVector, int, List)} for the user as the model alone knows them. */
    public Recommendation recommend(ServingModel model, String userId, int count, List<String> exclude) {
        return recommend(model, UserVector.fromModel(model, userId), count, exclude);
    }

    /**
     * The best {@code count} items for {@code user} under {@code model}, fewer when fewer are
     * left after skipping rated and excluded items. Blocks until scored.
     */
    public Recommendation recommend(ServingModel model, UserVector user, int count, List<String> exclude) {
        return ScoringEngine.await(recommendLater(model, user, count, exclude));
    }

    /**
     * {@link #recommend} without blocking: already complete for {@link Strategy#POPULAR}, else
     * completed on one of the engine's scoring threads (see {@link ScoringEngine#rankLater}).
     */
    public CompletableFuture<Recommendation> recommendLater(ServingModel model, UserVector user, int count,
            List<String> exclude) {
        return rank(model, user, count, indices(model, exclude));
    }

    /** {@link #recommendLater} with the excluded items as serving indices, sorted and distinct. */
    private CompletableFuture<Recommendation> rank(ServingModel model, UserVector user, int count, int[] excluded) {
        if (count < 0) {
            throw new IllegalArgumentException("count " + count + " must be >= 0");
        }
        int[] skip = user.rated();
        int skipFrom = user.ratedFrom();
        int skipTo = user.ratedTo();
        if (excluded.length > 0) {
            skip = union(skip, skipFrom, skipTo, excluded);
            skipFrom = 0;
            skipTo = skip.length;
        }
        if (!user.hasVector()) {
            return CompletableFuture.completedFuture(rankByPopularity(model, count, skip, skipFrom, skipTo));
        }
        return score(model, user, count, skip, skipFrom, skipTo);
    }

    /** The engine's best {@code count} for a user with a vector, as predicted ratings on the scale. */
    private CompletableFuture<Recommendation> score(ServingModel model, UserVector user, int count, int[] skip,
            int skipFrom, int skipTo) {
        double base = (double) model.globalMean() + user.bias();
        return engine.rankLater(model, user.factors(), user.offset(), count, skip, skipFrom, skipTo)
                .thenApply(ranked -> {
                    float[] scores = ranked.scores();
                    for (int j = 0; j < scores.length; j++) {
                        scores[j] = model.clampToScale(base + scores[j]);
                    }
                    return new Recommendation(user.strategy(), ranked.items(), scores);
                });
    }

    /**
     * {@link #recommendLater(ServingModel, UserVector, int, List)} for a user the model alone knows
     * ({@code user} is {@code UserVector.fromModel} of model user index {@code userIndex}), answered
     * from {@code lists} when it holds the user's list; otherwise scored to {@link ListCache#DEPTH}
     * items, kept there, and cut to {@code count}. Requests too long for the cache, and users
     * without a vector, go the usual way.
     */
    public CompletableFuture<Recommendation> recommendLater(ServingModel model, UserVector user, int userIndex,
            int count, List<String> exclude, ListCache lists) {
        int[] excluded = indices(model, exclude);
        if (!user.hasVector() || count < 0 || !lists.fits(count, excluded.length)) {
            return rank(model, user, count, excluded);
        }
        Recommendation kept = lists.get(userIndex, user.strategy(), count, excluded);
        if (kept != null) {
            return CompletableFuture.completedFuture(kept);
        }
        return score(model, user, ListCache.DEPTH, user.rated(), user.ratedFrom(), user.ratedTo())
                .thenApply(full -> lists.keep(userIndex, full, count, excluded));
    }

    /**
     * The {@code count} items most similar to serving item {@code item} by cosine of their factor
     * vectors, best first, leaving out the item itself and the {@code exclude} ids. Does not block:
     * the future completes on a scoring thread (see {@link #recommendLater}).
     */
    public CompletableFuture<Ranked> similarLater(ServingModel model, int item, int count, List<String> exclude) {
        int[] excluded = indices(model, exclude);
        return engine.similarLater(model, item, count, excluded, 0, excluded.length);
    }

    private static Recommendation rankByPopularity(ServingModel model, int count, int[] skip, int skipFrom,
            int skipTo) {
        int[] order = model.popularityOrder();
        int[] picked = new int[Math.min(count, order.length)];
        int size = 0;
        for (int r = 0; r < order.length && size < picked.length; r++) {
            int i = order[r];
            if (skipTo == skipFrom || Arrays.binarySearch(skip, skipFrom, skipTo, i) < 0) {
                picked[size++] = i;
            }
        }
        int[] items = size == picked.length ? picked : Arrays.copyOf(picked, size);
        float[] scores = new float[size];
        float[] itemBias = model.itemBias();
        for (int j = 0; j < size; j++) {
            scores[j] = model.clampToScale((double) model.globalMean() + itemBias[items[j]]);
        }
        return new Recommendation(Strategy.POPULAR, items, scores);
    }

    /** Serving indices of the ids the model knows, sorted, without duplicates. */
    private static int[] indices(ServingModel model, List<String> ids) {
        if (ids.isEmpty()) {
            return new int[0];
        }
        int[] out = new int[ids.size()];
        int n = 0;
        for (String id : ids) {
            int item = model.itemIndex(id);
            if (item >= 0) {
                out[n++] = item;
            }
        }
        Arrays.sort(out, 0, n);
        int distinct = 0;
        for (int j = 0; j < n; j++) {
            if (distinct == 0 || out[distinct - 1] != out[j]) {
                out[distinct++] = out[j];
            }
        }
        return Arrays.copyOf(out, distinct);
    }

    /** The sorted union of {@code a[from..to)} and {@code b} (both sorted). */
    private static int[] union(int[] a, int from, int to, int[] b) {
        int[] out = new int[to - from + b.length];
        int n = 0;
        int i = from;
        int j = 0;
        while (i < to || j < b.length) {
            int next;
            if (j == b.length || (i < to && a[i] <= b[j])) {
                next = a[i++];
            } else {
                next = b[j++];
            }
            if (n == 0 || out[n - 1] != next) {
                out[n++] = next;
            }
        }
        return Arrays.copyOf(out, n);
    }
}
