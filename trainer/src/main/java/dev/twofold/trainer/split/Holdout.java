package dev.twofold.trainer.split;

/**
 * A rule that divides rating rows into training and held-out rows. Implementations are
 * deterministic: the same rows and settings give the same split.
 */
public interface Holdout {

    /**
     * @param numUsers   user index space
     * @param ratingUser user index of each rating row
     * @param ratingItem item index of each rating row
     * @param ratingTime epoch seconds of each rating row (or a "no time" marker); rules that do not
     *                   look at time ignore it and may be given null
     */
    Split split(int numUsers, int[] ratingUser, int[] ratingItem, long[] ratingTime);
}
