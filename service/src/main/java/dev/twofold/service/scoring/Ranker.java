package dev.twofold.service.scoring;

import dev.twofold.service.model.ServingModel;
import java.util.Arrays;
import java.util.List;

/**
 * Ranks the items a user has not rated.
 *
 * <p>A user with learned factors ({@link Strategy#MODEL}) gets the items with the highest
 * r̂(u,i) = μ + b_u + b_i + p_u·q_i: one pass over Q scores every item into a per-thread buffer,
 * then a bounded heap keeps the best {@code count} in O(n·k + n·log count). Items are ranked by the
 * unclamped prediction, so an item predicted above the top of the scale still ranks above one
 * predicted just at the top; the scores reported are clamped to the scale. Equal predictions rank
 * the lower serving item index first.
 *
 * <p>Anyone else ({@link Strategy#POPULAR}: unknown id, or known but without factors) gets the
 * model's popularity order, scored μ + b_i, the prediction for a user about whom nothing is known.
 *
 * <p>Either way the user's rated items and the request's excluded items never appear. Excluded
 * ids the model does not know are ignored. Thread-safe; the scratch buffers are per thread and
 * grow to the largest model seen.
 */
public final class Ranker {

    private static final class Scratch {
        float[] scores = new float[0];
        long[] skip = new long[0];
        final TopK best = new TopK(16);

        void fit(int numItems) {
            if (scores.length < numItems) {
                scores = new float[numItems];
            }
            int words = (numItems + 63) >>> 6;
            if (skip.length < words) {
                skip = new long[words];
            }
        }
    }

    private final ThreadLocal<Scratch> scratch = ThreadLocal.withInitial(Scratch::new);

    /**
     * The best {@code count} items for {@code userId} under {@code model}, fewer when fewer are
     * left after skipping rated and excluded items.
     */
    public Recommendation recommend(ServingModel model, String userId, int count, List<String> exclude) {
        if (count < 0) {
            throw new IllegalArgumentException("count " + count + " must be >= 0");
        }
        Scratch s = scratch.get();
        s.fit(model.numItems());
        int user = model.userIndex(userId);
        int[] rated = model.ratedItems();
        int ratedFrom = model.ratedStart(user);
        int ratedTo = model.ratedEnd(user);
        long[] skip = s.skip;
        for (int r = ratedFrom; r < ratedTo; r++) {
            setBit(skip, rated[r]);
        }
        int[] excluded = new int[exclude.size()];
        int numExcluded = 0;
        for (String id : exclude) {
            int item = model.itemIndex(id);
            if (item >= 0) {
                excluded[numExcluded++] = item;
                setBit(skip, item);
            }
        }
        try {
            return model.hasFactors(user)
                    ? rankByModel(model, user, count, s)
                    : rankByPopularity(model, count, skip);
        } finally {
            for (int r = ratedFrom; r < ratedTo; r++) {
                clearBit(skip, rated[r]);
            }
            for (int e = 0; e < numExcluded; e++) {
                clearBit(skip, excluded[e]);
            }
        }
    }

    private static Recommendation rankByModel(ServingModel model, int user, int count, Scratch s) {
        int k = model.rank();
        int n = model.numItems();
        float[] scores = s.scores;
        long[] skip = s.skip;
        ScoreKernel.scoreItems(model.userFactors(), user * k, k, model.itemFactors(), model.itemBias(), n, scores);
        TopK best = s.best;
        best.reset(Math.min(count, n));
        for (int i = 0; i < n; i++) {
            if ((skip[i >>> 6] & (1L << i)) == 0) {
                best.offer(i, scores[i]);
            }
        }
        int[] items = new int[best.size()];
        float[] out = new float[items.length];
        best.drainBestFirst(items, out);
        double base = (double) model.globalMean() + model.userBias()[user];
        for (int j = 0; j < items.length; j++) {
            out[j] = model.clampToScale(base + out[j]);
        }
        return new Recommendation(Strategy.MODEL, items, out);
    }

    private static Recommendation rankByPopularity(ServingModel model, int count, long[] skip) {
        int[] order = model.popularityOrder();
        int[] picked = new int[Math.min(count, order.length)];
        int size = 0;
        for (int r = 0; r < order.length && size < picked.length; r++) {
            int i = order[r];
            if ((skip[i >>> 6] & (1L << i)) == 0) {
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

    private static void setBit(long[] bits, int i) {
        bits[i >>> 6] |= 1L << i;
    }

    private static void clearBit(long[] bits, int i) {
        bits[i >>> 6] &= ~(1L << i);
    }
}
