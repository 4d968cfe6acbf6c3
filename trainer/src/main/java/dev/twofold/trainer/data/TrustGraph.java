package dev.twofold.trainer.data;

/**
 * Who trusts whom, as a sparse weighted {@code numUsers × numUsers} matrix held in both orientations:
 *
 * <ul>
 *   <li>out-edges (CSR by truster): the users u trusts are {@code trustees[outStart[u] .. outStart[u+1]-1]}
 *       with weights {@code outWeights[...]}, trustees ascending;
 *   <li>in-edges (the transpose, CSR by trustee): the users who trust v are
 *       {@code trusters[inStart[v] .. inStart[v+1]-1]} with weights {@code inWeights[...]}, trusters ascending.
 * </ul>
 *
 * <p>Weights lie in (0, 1]; self-trust and repeated edges are refused. The accessors return the
 * graph's own arrays for numeric kernels: treat them as read-only.
 */
public final class TrustGraph {

    private final int numUsers;
    private final int[] outStart;
    private final int[] trustees;
    private final float[] outWeights;
    private final int[] inStart;
    private final int[] trusters;
    private final float[] inWeights;

    private TrustGraph(int numUsers, int[] outStart, int[] trustees, float[] outWeights, int[] inStart, int[] trusters,
            float[] inWeights) {
        this.numUsers = numUsers;
        this.outStart = outStart;
        this.trustees = trustees;
        this.outWeights = outWeights;
        this.inStart = inStart;
        this.trusters = trusters;
        this.inWeights = inWeights;
    }

    /** A graph over {@code numUsers} users with no edges. */
    public static TrustGraph empty(int numUsers) {
        return of(numUsers, new int[0], new int[0], new float[0]);
    }

    /**
     * Builds the graph from parallel (truster, trustee, weight) arrays. Cost O(|E| + numUsers).
     *
     * @throws IllegalArgumentException naming the edge when an index is out of range, the weight is
     *     outside (0, 1], a user trusts themselves, or an edge occurs twice
     */
    public static TrustGraph of(int numUsers, int[] truster, int[] trustee, float[] weight) {
        if (numUsers < 0) {
            throw new IllegalArgumentException("number of users " + numUsers + " must not be negative");
        }
        if (truster.length != trustee.length || truster.length != weight.length) {
            throw new IllegalArgumentException("trust arrays differ in length: trusters " + truster.length
                    + ", trustees " + trustee.length + ", weights " + weight.length);
        }
        int e = truster.length;
        for (int p = 0; p < e; p++) {
            if (truster[p] < 0 || truster[p] >= numUsers) {
                throw new IllegalArgumentException("trust edge " + p + ": truster index " + truster[p] + " outside 0.." + (numUsers - 1));
            }
            if (trustee[p] < 0 || trustee[p] >= numUsers) {
                throw new IllegalArgumentException("trust edge " + p + ": trustee index " + trustee[p] + " outside 0.." + (numUsers - 1));
            }
            if (truster[p] == trustee[p]) {
                throw new IllegalArgumentException("trust edge " + p + ": user index " + truster[p] + " trusts themselves");
            }
            if (!(weight[p] > 0f && weight[p] <= 1f)) {
                throw new IllegalArgumentException("trust edge " + p + ": weight " + weight[p] + " outside (0, 1]");
            }
        }

        // Counting sort by trustee, then by truster: out-rows come out with trustees ascending.
        int[] inStart = new int[numUsers + 1];
        for (int p = 0; p < e; p++) {
            inStart[trustee[p] + 1]++;
        }
        prefixSum(inStart);
        int[] byTrustee = new int[e];
        int[] fill = inStart.clone();
        for (int p = 0; p < e; p++) {
            byTrustee[fill[trustee[p]]++] = p;
        }
        int[] outStart = new int[numUsers + 1];
        for (int p = 0; p < e; p++) {
            outStart[truster[p] + 1]++;
        }
        prefixSum(outStart);
        int[] outTrustees = new int[e];
        float[] outWeights = new float[e];
        fill = outStart.clone();
        for (int s = 0; s < e; s++) {
            int p = byTrustee[s];
            int at = fill[truster[p]]++;
            outTrustees[at] = trustee[p];
            outWeights[at] = weight[p];
        }
        for (int u = 0; u < numUsers; u++) {
            for (int at = outStart[u] + 1; at < outStart[u + 1]; at++) {
                if (outTrustees[at] == outTrustees[at - 1]) {
                    throw new IllegalArgumentException("user index " + u + " trusts user index " + outTrustees[at]
                            + " twice; keep one edge");
                }
            }
        }
        int[] inTrusters = new int[e];
        float[] inWeights = new float[e];
        fill = inStart.clone();
        for (int u = 0; u < numUsers; u++) {
            for (int at = outStart[u]; at < outStart[u + 1]; at++) {
                int to = fill[outTrustees[at]]++;
                inTrusters[to] = u;
                inWeights[to] = outWeights[at];
            }
        }
        return new TrustGraph(numUsers, outStart, outTrustees, outWeights, inStart, inTrusters, inWeights);
    }

    private static void prefixSum(int[] counts) {
        for (int j = 1; j < counts.length; j++) {
            counts[j] += counts[j - 1];
        }
    }

    public int numUsers() {
        return numUsers;
    }

    public int numEdges() {
        return trustees.length;
    }

    /** Out-edge pointers by truster, length numUsers + 1. */
    public int[] outStart() {
        return outStart;
    }

    /** Trustee of each out-edge, ascending within a truster's row. */
    public int[] trustees() {
        return trustees;
    }

    /** Weight of each out-edge. */
    public float[] outWeights() {
        return outWeights;
    }

    /** In-edge pointers by trustee, length numUsers + 1. */
    public int[] inStart() {
        return inStart;
    }

    /** Truster of each in-edge, ascending within a trustee's row. */
    public int[] trusters() {
        return trusters;
    }

    /** Weight of each in-edge. */
    public float[] inWeights() {
        return inWeights;
    }

    /** How many users u trusts. */
    public int outDegree(int u) {
        return outStart[u + 1] - outStart[u];
    }

    /** How many users trust v. */
    public int inDegree(int v) {
        return inStart[v + 1] - inStart[v];
    }
}
