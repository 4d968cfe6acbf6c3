package dev.twofold.trainer.fit;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import java.util.BitSet;
import java.util.List;
import java.util.SplittableRandom;

/**
 * The parameters every solver updates in place, started the same way for all of them: μ is the mean
 * training rating (0 without biases); factors of rows with data are Gaussian with standard deviation
 * initScale/√k from the seed, rows without data start at zero; biases start at zero.
 *
 * <p>Which rows have data: an item with ratings; a user with ratings, or (with a trust coupling) who
 * trusts someone; a trustee of the shared coupling who is trusted. Under neighbour coupling a user
 * who is only trusted is still solved (the terms of those who trust them pull on their row) but is
 * not {@linkplain FittedModel#knownUsers() known}.
 */
final class FitState {

    final int m;
    final int n;
    final int k;
    final boolean biases;
    final float mu;
    final float[] p;
    final float[] bu;
    final float[] q;
    final float[] bi;
    /** Z for shared coupling, else null. */
    final float[] z;
    final BitSet knownUsers;
    final BitSet knownItems;
    final BitSet knownTrustees;
    /** Users whose row the user step solves (the others stay zero). */
    final BitSet solvedUsers;
    /** The neighbour term for neighbour coupling with β &gt; 0, else null. */
    final NeighbourTerm neighbour;

    private FitState(RatingMatrix r, TrustGraph t, FitSettings s) {
        m = r.numUsers();
        n = r.numItems();
        k = s.rank();
        biases = s.biases();
        mu = biases ? (float) r.mean() : 0f;
        boolean shared = s.coupling() == Coupling.SHARED;
        boolean neighbours = s.coupling() == Coupling.NEIGHBOUR;
        neighbour = neighbours && s.trustWeight() > 0 ? NeighbourTerm.of(t, s.trustWeight()) : null;
        knownUsers = new BitSet(m);
        knownItems = new BitSet(n);
        knownTrustees = new BitSet(m);
        solvedUsers = new BitSet(m);
        for (int u = 0; u < m; u++) {
            boolean trusts = (shared || neighbours) && t.outDegree(u) > 0;
            if (r.userCount(u) > 0 || trusts) {
                knownUsers.set(u);
                solvedUsers.set(u);
            }
            if (neighbour != null && neighbour.involves(u)) {
                solvedUsers.set(u);
            }
            if (shared && t.inDegree(u) > 0) {
                knownTrustees.set(u);
            }
        }
        for (int i = 0; i < n; i++) {
            if (r.itemCount(i) > 0) {
                knownItems.set(i);
            }
        }
        p = new float[m * k];
        bu = new float[m];
        q = new float[n * k];
        bi = new float[n];
        z = shared ? new float[m * k] : null;
        SplittableRandom random = new SplittableRandom(s.seed());
        double sd = s.initScale() / Math.sqrt(Math.max(k, 1));
        initialise(p, m, k, knownUsers, random, sd);
        initialise(q, n, k, knownItems, random, sd);
        if (shared) {
            initialise(z, m, k, knownTrustees, random, sd);
        }
    }

    static FitState start(TrainingData data, FitSettings s) {
        if (data.ratings().nnz() == 0) {
            throw new IllegalArgumentException("no training ratings: there is nothing to fit");
        }
        return new FitState(data.ratings(), data.trust(), s);
    }

    /** A model over the current arrays (not copies). */
    FittedModel model(FitSettings s, List<EpochReport> history) {
        return new FittedModel(k, mu, p, bu, q, bi, z, knownUsers, knownItems, s, history);
    }

    private static void initialise(float[] f, int rows, int k, BitSet keep, SplittableRandom random, double sd) {
        for (int row = 0; row < rows; row++) {
            for (int a = 0; a < k; a++) {
                double g = random.nextDouble();
                double h = random.nextDouble();
                // Box–Muller from two uniforms, so the stream is the same on every JVM.
                double gaussian = Math.sqrt(-2 * Math.log1p(-g)) * Math.cos(2 * Math.PI * h);
                f[row * k + a] = keep.get(row) ? (float) (sd * gaussian) : 0f;
            }
        }
    }

    static void zeroRow(float[] f, float[] bias, int row, int k) {
        for (int a = 0; a < k; a++) {
            f[row * k + a] = 0f;
        }
        if (bias != null) {
            bias[row] = 0f;
        }
    }
}
