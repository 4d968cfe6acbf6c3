package dev.twofold.trainer.sweep;

/**
 * One setting of a sweep and what it achieved on the validation rows.
 *
 * @param rank           k
 * @param lambda         λ
 * @param validationRmse RMSE on the validation rows at the best epoch
 * @param precision      precision@k on the validation rows at the best epoch (NaN when nobody has a relevant validation rating)
 * @param bestEpoch      the epoch with the lowest validation RMSE (early stopping keeps it)
 * @param epochsRun      epochs run before stopping
 * @param seconds        wall time of the fit
 */
public record SweepPoint(int rank, float lambda, double validationRmse, double precision, int bestEpoch, int epochsRun,
        double seconds) {
}
