package dev.twofold.db.registry;

import java.util.BitSet;

/**
 * The learned numbers of one model version, as flat row-major float32 arrays (stride = rank).
 * Rows of users or items that had no training data are zero and their bit in {@code knownUsers} /
 * {@code knownItems} is clear; only known rows are stored.
 *
 * @param rank           k
 * @param userFactors    P, numUsers × k
 * @param userBias       b_u, numUsers
 * @param knownUsers     users with factors learned from data (ratings or trust)
 * @param itemFactors    Q, numItems × k
 * @param itemBias       b_i, numItems
 * @param itemPopularity popularity score used to serve users nobody knows (higher first)
 * @param knownItems     items with factors learned from ratings
 * @param trustFactors   Z, numUsers × k: the trustee side of T ≈ P·Zᵀ, or null when the coupling is not {@code shared}
 */
public record ModelFactors(
        int rank,
        float[] userFactors,
        float[] userBias,
        BitSet knownUsers,
        float[] itemFactors,
        float[] itemBias,
        float[] itemPopularity,
        BitSet knownItems,
        float[] trustFactors) {

    public int numUsers() {
        return userBias.length;
    }

    public int numItems() {
        return itemBias.length;
    }
}
