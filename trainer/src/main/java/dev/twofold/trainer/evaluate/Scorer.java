package dev.twofold.trainer.evaluate;

import dev.twofold.trainer.fit.FittedModel;

/** Anything that gives a (user, item) pair a score: a model, or a baseline. Higher ranks first. */
@FunctionalInterface
public interface Scorer {

    /** The raw score; error metrics clamp it to the rating scale, ranking uses it as is. */
    double score(int user, int item);

    /** Scores every item for one user into {@code out[0..out.length)}. */
    default void scoreItems(int user, double[] out) {
        for (int i = 0; i < out.length; i++) {
            out[i] = score(user, i);
        }
    }

    /** The model's μ + b_u + b_i + p_u·q_i. */
    static Scorer of(FittedModel model) {
        return new Scorer() {
            @Override
            public double score(int user, int item) {
                return model.score(user, item);
            }

            @Override
            public void scoreItems(int user, double[] out) {
                model.scoreItems(user, out);
            }
        };
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
            public void scoreItems(int user, double[] out) {
                for (int i = 0; i < out.length; i++) {
                    out[i] = itemScores[i];
                }
            }
        };
    }
}
