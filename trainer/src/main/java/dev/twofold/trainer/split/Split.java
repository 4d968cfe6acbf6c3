package dev.twofold.trainer.split;

/**
 * Which rating rows train the model and which are held out to judge it.
 *
 * @param train positions of the training rows, ascending
 * @param test  positions of the held-out rows, ascending; disjoint from {@code train}
 */
public record Split(int[] train, int[] test) {
}
