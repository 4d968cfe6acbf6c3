package dev.twofold.trainer.publish;

import dev.twofold.db.BadInputException;
import dev.twofold.db.snapshot.Snapshot;
import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import dev.twofold.trainer.fit.TrainingData;
import dev.twofold.trainer.split.Split;

/**
 * A snapshot cut into training and held-out ratings: the matrices the fit and the evaluation read.
 * All trust edges train (trust is not held out).
 */
public record HeldOutData(Snapshot snapshot, Split split, RatingMatrix train, RatingMatrix test, TrustGraph trust) {

    /** Splits with the settings' method, holdout share and split seed. */
    public static HeldOutData of(Snapshot s, TrainSettings settings) {
        Split split = split(settings, settings.splitSeed(), s.numUsers(), s.ratingUser(), s.ratingItem(), s.ratingTime());
        RatingMatrix train = RatingMatrix.of(s.numUsers(), s.numItems(), s.ratingUser(), s.ratingItem(), s.rating(),
                split.train());
        RatingMatrix test = RatingMatrix.of(s.numUsers(), s.numItems(), s.ratingUser(), s.ratingItem(), s.rating(),
                split.test());
        TrustGraph trust = TrustGraph.of(s.numUsers(), s.truster(), s.trustee(), s.trustWeight());
        return new HeldOutData(s, split, train, test, trust);
    }

    public TrainingData trainingData() {
        return new TrainingData(train, trust, null);
    }

    /**
     * The training rows cut again, the same way with another seed, into fitting rows and validation
     * rows: what sweeps and early stopping look at, so the held-out rows judge the model untouched.
     */
    public Validation validation(TrainSettings settings) {
        int[] rows = split.train();
        int[] u = new int[rows.length];
        int[] i = new int[rows.length];
        long[] t = snapshot.ratingTime() == null ? null : new long[rows.length];
        for (int x = 0; x < rows.length; x++) {
            u[x] = snapshot.ratingUser()[rows[x]];
            i[x] = snapshot.ratingItem()[rows[x]];
            if (t != null) {
                t[x] = snapshot.ratingTime()[rows[x]];
            }
        }
        Split inner = split(settings, settings.splitSeed() + TrainSettings.VALIDATION_SEED_OFFSET, snapshot.numUsers(),
                u, i, t);
        int[] fitRows = new int[inner.train().length];
        int[] validationRows = new int[inner.test().length];
        for (int x = 0; x < fitRows.length; x++) {
            fitRows[x] = rows[inner.train()[x]];
        }
        for (int x = 0; x < validationRows.length; x++) {
            validationRows[x] = rows[inner.test()[x]];
        }
        Snapshot s = snapshot;
        RatingMatrix fit = RatingMatrix.of(s.numUsers(), s.numItems(), s.ratingUser(), s.ratingItem(), s.rating(), fitRows);
        RatingMatrix validation = RatingMatrix.of(s.numUsers(), s.numItems(), s.ratingUser(), s.ratingItem(), s.rating(),
                validationRows);
        return new Validation(new TrainingData(fit, trust, null), validation);
    }

    /** Fitting rows (with trust) and validation rows. */
    public record Validation(TrainingData fit, RatingMatrix rows) {
    }

    private static Split split(TrainSettings settings, long seed, int numUsers, int[] user, int[] item, long[] time) {
        try {
            return settings.split().holdout(settings.holdout(), seed).split(numUsers, user, item, time);
        } catch (IllegalArgumentException e) {
            throw new BadInputException("cannot split the ratings by " + settings.split().label() + ": " + e.getMessage());
        }
    }
}
