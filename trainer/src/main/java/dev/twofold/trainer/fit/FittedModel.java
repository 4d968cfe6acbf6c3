package dev.twofold.trainer.fit;

import java.util.BitSet;
import java.util.List;

/**
 * A fitted model: r̂(u,i) = μ + b_u + b_i + p_u·q_i, clamped to the rating scale when predicting.
 * Factors are flat row-major float arrays with stride {@code rank}: P (numUsers × k), Q (numItems × k)
 * and, for shared coupling, Z (numUsers × k), the trustee side of T ≈ P·Zᵀ. Rows of users or items
 * without training data are zero and their bit in {@link #knownUsers()} / {@link #knownItems()} is
 * clear. The arrays are the model's own storage: treat them as read-only.
 */
public final class FittedModel {

    private final int rank;
    private final float globalMean;
    private final float[] userFactors;
    private final float[] userBias;
    private final float[] itemFactors;
    private final float[] itemBias;
    private final float[] trustFactors;
    private final BitSet knownUsers;
    private final BitSet knownItems;
    private final FitSettings settings;
    private final List<EpochReport> history;

    /**
     * @param trustFactors Z, or null when the model has no trust side
     * @param history      reports of the epochs that produced the model (may be empty)
     */
    public FittedModel(int rank, float globalMean, float[] userFactors, float[] userBias, float[] itemFactors,
            float[] itemBias, float[] trustFactors, BitSet knownUsers, BitSet knownItems, FitSettings settings,
            List<EpochReport> history) {
        if (rank != settings.rank()) {
            throw new IllegalArgumentException("model rank " + rank + " differs from its settings' rank " + settings.rank());
        }
        if ((long) userBias.length * rank != userFactors.length) {
            throw new IllegalArgumentException("user factors hold " + userFactors.length + " floats, expected "
                    + userBias.length + " users × rank " + rank);
        }
        if ((long) itemBias.length * rank != itemFactors.length) {
            throw new IllegalArgumentException("item factors hold " + itemFactors.length + " floats, expected "
                    + itemBias.length + " items × rank " + rank);
        }
        if (trustFactors != null && trustFactors.length != userFactors.length) {
            throw new IllegalArgumentException("trust factors hold " + trustFactors.length + " floats, expected "
                    + userFactors.length);
        }
        this.rank = rank;
        this.globalMean = globalMean;
        this.userFactors = userFactors;
        this.userBias = userBias;
        this.itemFactors = itemFactors;
        this.itemBias = itemBias;
        this.trustFactors = trustFactors;
        this.knownUsers = knownUsers;
        this.knownItems = knownItems;
        this.settings = settings;
        this.history = List.copyOf(history);
    }

    /** The raw score μ + b_u + b_i + p_u·q_i (unclamped: ranking uses it). */
    public double score(int user, int item) {
        double s = (double) globalMean + userBias[user] + itemBias[item];
        int pu = user * rank;
        int qi = item * rank;
        for (int a = 0; a < rank; a++) {
            s += (double) userFactors[pu + a] * itemFactors[qi + a];
        }
        return s;
    }

    /** The prediction r̂(u,i): the score clamped to {@code [scaleMin, scaleMax]}. */
    public double predict(int user, int item, float scaleMin, float scaleMax) {
        double s = score(user, item);
        return s < scaleMin ? scaleMin : (s > scaleMax ? scaleMax : s);
    }

    /** Scores every item for one user into {@code out[0..numItems-1]}. O(numItems·k). */
    public void scoreItems(int user, double[] out) {
        int n = itemBias.length;
        int pu = user * rank;
        double base = (double) globalMean + userBias[user];
        for (int i = 0, qi = 0; i < n; i++, qi += rank) {
            double s = 0;
            for (int a = 0; a < rank; a++) {
                s += (double) userFactors[pu + a] * itemFactors[qi + a];
            }
            out[i] = base + itemBias[i] + s;
        }
    }

    /** A fold-in against this model's item side (and trust side for shared coupling). */
    public FoldIn foldIn() {
        return FoldIn.forModel(this);
    }

    public int rank() {
        return rank;
    }

    public int numUsers() {
        return userBias.length;
    }

    public int numItems() {
        return itemBias.length;
    }

    /** μ. */
    public float globalMean() {
        return globalMean;
    }

    /** P, numUsers × k, row-major. */
    public float[] userFactors() {
        return userFactors;
    }

    /** b_u. */
    public float[] userBias() {
        return userBias;
    }

    /** Q, numItems × k, row-major. */
    public float[] itemFactors() {
        return itemFactors;
    }

    /** b_i. */
    public float[] itemBias() {
        return itemBias;
    }

    /** Z, numUsers × k, row-major, or null without a trust side. */
    public float[] trustFactors() {
        return trustFactors;
    }

    /** Users whose factors were learned from data (ratings, or trust edges they gave under shared coupling). */
    public BitSet knownUsers() {
        return knownUsers;
    }

    /** Items whose factors were learned from ratings. */
    public BitSet knownItems() {
        return knownItems;
    }

    public FitSettings settings() {
        return settings;
    }

    /** One report per epoch run. */
    public List<EpochReport> history() {
        return history;
    }
}
