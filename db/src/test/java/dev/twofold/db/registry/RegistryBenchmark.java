package dev.twofold.db.registry;

import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import java.util.BitSet;
import java.util.Locale;
import java.util.SplittableRandom;

/**
 * Factor store and load throughput: {@code USERS} users and {@code ITEMS} items at rank {@code RANK}
 * with shared trust factors. Not a test; run with
 *
 * <pre>deploy/bench db dev.twofold.db.registry.RegistryBenchmark</pre>
 */
public final class RegistryBenchmark {

    static final int USERS = 100_000;
    static final int ITEMS = 20_000;
    static final int RANK = 32;
    static final long SEED = 11L;

    private RegistryBenchmark() {
    }

    public static void main(String[] args) {
        SplittableRandom random = new SplittableRandom(SEED);
        float[] p = new float[USERS * RANK];
        float[] z = new float[USERS * RANK];
        float[] q = new float[ITEMS * RANK];
        for (int i = 0; i < p.length; i++) {
            p[i] = (float) random.nextGaussian();
            z[i] = (float) random.nextGaussian();
        }
        for (int i = 0; i < q.length; i++) {
            q[i] = (float) random.nextGaussian();
        }
        BitSet users = new BitSet();
        users.set(0, USERS);
        BitSet items = new BitSet();
        items.set(0, ITEMS);
        ModelFactors factors = new ModelFactors(RANK, p, new float[USERS], users, q, new float[ITEMS], new float[ITEMS], items, z);
        try (Database db = TestDatabases.fresh()) {
            ModelRegistry registry = new ModelRegistry(db);
            for (int round = 0; round < 3; round++) {
                long id = registry.create(new ModelHeader(0, null, RANK, "shared", 0.05f, 0.5f, 10f, 1f, 5f, 3.5f, USERS, ITEMS,
                        null, null, "{}", null, "{}", null));
                long t0 = System.nanoTime();
                registry.storeFactors(id, factors);
                long t1 = System.nanoTime();
                ModelFactors loaded = registry.loadFactors(id);
                long t2 = System.nanoTime();
                System.out.printf(Locale.ROOT, "rank %d, %,d users (+ trust factors), %,d items: store %.2f s, load %.2f s (%d known users)%n",
                        RANK, USERS, ITEMS, (t1 - t0) / 1e9, (t2 - t1) / 1e9, loaded.knownUsers().cardinality());
            }
        }
    }
}
