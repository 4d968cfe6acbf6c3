package dev.twofold.trainer.publish;

import dev.twofold.db.snapshot.Snapshot;
import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import dev.twofold.trainer.fit.TrainingData;
import dev.twofold.trainer.split.PerUserHoldout;
import dev.twofold.trainer.split.Split;

/**
 * A snapshot cut into training and held-out ratings: the matrices the fit and the evaluation read.
 * All trust edges train (trust is not held out).
 */
record HeldOutData(Snapshot snapshot, Split split, RatingMatrix train, RatingMatrix test, TrustGraph trust) {

    static HeldOutData of(Snapshot s, TrainSettings settings) {
        Split split = new PerUserHoldout(settings.holdout(), settings.splitSeed())
                .split(s.numUsers(), s.ratingUser(), s.ratingItem(), s.ratingTime());
        RatingMatrix train = RatingMatrix.of(s.numUsers(), s.numItems(), s.ratingUser(), s.ratingItem(), s.rating(),
                split.train());
        RatingMatrix test = RatingMatrix.of(s.numUsers(), s.numItems(), s.ratingUser(), s.ratingItem(), s.rating(),
                split.test());
        TrustGraph trust = TrustGraph.of(s.numUsers(), s.truster(), s.trustee(), s.trustWeight());
        return new HeldOutData(s, split, train, test, trust);
    }

    TrainingData trainingData() {
        return new TrainingData(train, trust, null);
    }
}
