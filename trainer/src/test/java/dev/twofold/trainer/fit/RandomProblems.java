package dev.twofold.trainer.fit;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import java.util.Arrays;
import java.util.BitSet;
import java.util.List;
import java.util.Random;

/** Small random rating and trust problems for solver checks (invented data, fixed seeds). */
final class RandomProblems {

    private RandomProblems() {
    }

    /** Each cell rated with probability {@code density} (every user and item at least once), integer ratings 1..5; each user trusts about {@code follows} others. */
    static TrainingData problem(int users, int items, double density, int follows, long seed) {
        Random random = new Random(seed);
        int[] u = new int[users * items];
        int[] i = new int[users * items];
        float[] v = new float[users * items];
        int count = 0;
        for (int a = 0; a < users; a++) {
            for (int b = 0; b < items; b++) {
                if (random.nextDouble() < density || b == a % items || a == b % users) {
                    u[count] = a;
                    i[count] = b;
                    v[count] = 1 + random.nextInt(5);
                    count++;
                }
            }
        }
        RatingMatrix ratings = RatingMatrix.of(users, items, Arrays.copyOf(u, count),
                Arrays.copyOf(i, count), Arrays.copyOf(v, count));
        return new TrainingData(ratings, trust(users, follows, random), null);
    }

    static TrustGraph trust(int users, int follows, Random random) {
        int[] from = new int[users * follows];
        int[] to = new int[users * follows];
        float[] w = new float[users * follows];
        int e = 0;
        for (int a = 0; a < users; a++) {
            BitSet chosen = new BitSet(users);
            for (int f = 0; f < follows && users > 1; f++) {
                int b = random.nextInt(users);
                if (b == a || chosen.get(b)) {
                    continue;
                }
                chosen.set(b);
                from[e] = a;
                to[e] = b;
                w[e] = 0.25f * (1 + random.nextInt(4));
                e++;
            }
        }
        return TrustGraph.of(users, Arrays.copyOf(from, e), Arrays.copyOf(to, e),
                Arrays.copyOf(w, e));
    }

    /** A model at random parameters (factors and biases Gaussian with the given spread). */
    static FittedModel randomModel(TrainingData data, FitSettings s, double spread, long seed) {
        Random random = new Random(seed);
        int m = data.ratings().numUsers();
        int n = data.ratings().numItems();
        int k = s.rank();
        float[] p = gaussian(m * k, spread, random);
        float[] q = gaussian(n * k, spread, random);
        float[] z = s.sharesFactors() ? gaussian(m * k, spread, random) : null;
        float[] bu = s.biases() ? gaussian(m, spread, random) : new float[m];
        float[] bi = s.biases() ? gaussian(n, spread, random) : new float[n];
        float mu = s.biases() ? (float) data.ratings().mean() : 0f;
        BitSet all = new BitSet();
        all.set(0, Math.max(m, n));
        return new FittedModel(k, mu, p, bu, q, bi, z, all, all, s, List.of());
    }

    static float[] gaussian(int size, double spread, Random random) {
        float[] f = new float[size];
        for (int x = 0; x < size; x++) {
            f[x] = (float) (spread * random.nextGaussian());
        }
        return f;
    }
}
