package dev.twofold.trainer.evaluate;

import dev.twofold.trainer.fit.FittedModel;

/** Anything that gives a (user, item) pair a score: a model, or a baseline. Higher ranks first. */
@FunctionalInterface
public interface Scorer {

    /** The raw score; error metrics clamp it to the rating scale. */
    double score(int user, int item);

    /**
     * The ranking scores of items {@code from..to-1} for each of {@code users[0..count)}, written to
     * {@code out[g][i − from]} for the g-th user and item i. The default calls {@link #score}; a model
     * overrides it with a blocked product that gives, bit for bit, what {@link FittedModel#scoreItems}
     * gives.
     */
    default void scoreBlock(int[] users, int count, int from, int to, double[][] out) {
        for (int g = 0; g < count; g++) {
            int u = users[g];
            double[] row = out[g];
            for (int i = from; i < to; i++) {
                row[i - from] = score(u, i);
            }
        }
    }

    /**
     * The model's μ + b_u + b_i + p_u·q_i: {@link FittedModel#score} for errors, and for ranking the
     * scores of {@link FittedModel#scoreItems} from a blocked product (see {@link FactorScorer}).
     */
    static Scorer of(FittedModel model) {
        return new FactorScorer(model);
    }

    /** The same value for every pair (the global-mean baseline). */
    static Scorer constant(double value) {
        return (user, item) -> value;
    }

    /** A per-item score, the same for every user (the most-popular baseline). */
    static Scorer byItem(float[] itemScores) {
        return new Scorer() {
            @Override
            public double score(int user, int item) {
                return itemScores[item];
            }

            @Override
            public void scoreBlock(int[] users, int count, int from, int to, double[][] out) {
                for (int g = 0; g < count; g++) {
                    for (int i = from; i < to; i++) {
                        out[g][i - from] = itemScores[i];
                    }
                }
            }
        };
    }
}
