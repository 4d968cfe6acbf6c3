package dev.twofold.trainer.fit;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;

/**
 * What a solver learns from: training ratings, the trust graph over the same users, and optional
 * validation rows.
 */
public record TrainingData(RatingMatrix ratings, TrustGraph trust, ValidationSet validation) {

    public TrainingData {
        if (trust == null) {
            trust = TrustGraph.empty(ratings.numUsers());
        }
        if (validation == null) {
            validation = ValidationSet.none();
        }
        if (trust.numUsers() != ratings.numUsers()) {
            throw new IllegalArgumentException("trust graph has " + trust.numUsers() + " users but the rating matrix has "
                    + ratings.numUsers());
        }
        for (int s = 0; s < validation.size(); s++) {
            if (validation.users()[s] < 0 || validation.users()[s] >= ratings.numUsers()
                    || validation.items()[s] < 0 || validation.items()[s] >= ratings.numItems()) {
                throw new IllegalArgumentException("validation row " + s + ": (user " + validation.users()[s] + ", item "
                        + validation.items()[s] + ") outside the " + ratings.numUsers() + " × " + ratings.numItems() + " matrix");
            }
        }
    }

    /** Ratings only, no trust, no validation. */
    public static TrainingData of(RatingMatrix ratings) {
        return new TrainingData(ratings, null, null);
    }
}
