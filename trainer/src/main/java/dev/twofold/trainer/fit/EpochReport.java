package dev.twofold.trainer.fit;

/**
 * What one epoch achieved.
 *
 * @param epoch          1-based epoch number
 * @param objective      training objective after the epoch
 * @param validationRmse RMSE on the validation rows, NaN without validation rows
 * @param failedSolves   rows whose system could not be solved this epoch (they kept their old values)
 */
public record EpochReport(int epoch, double objective, double validationRmse, int failedSolves) {
}
