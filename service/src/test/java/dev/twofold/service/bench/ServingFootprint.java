package dev.twofold.service.bench;

import dev.twofold.db.snapshot.UserHistory;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.fresh.LiveModel;
import dev.twofold.service.fresh.LiveModels;
import dev.twofold.service.model.ServingModel;
import dev.twofold.service.scoring.Ranker;
import dev.twofold.service.scoring.Recommendation;
import java.lang.management.ManagementFactory;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.SplittableRandom;
import java.util.concurrent.CompletableFuture;

/**
 * Measures what a served model costs: retained heap against the raw factor bytes (P, Q and, with
 * the shared coupling, Z), then what a full set of fresh (folded-in) users adds, then what kept
 * ranked lists add when every slot of their budget is taken, and the time to rank one user's
 * items. A plain main, not a test:
 *
 * <pre>
 * JAVA_OPTS="--add-modules jdk.incubator.vector -Xmx6g" deploy/bench service \
 *     dev.twofold.service.bench.ServingFootprint [users items rank ratingsPerUser shared|none freshUsers listMiB]
 * </pre>
 * Defaults: 1,000,000 users, 100,000 items, rank 64, 20 ratings per user, no Z, 100,000 fresh
 * users (the default {@code TWOFOLD_FRESH_USERS}), 32 MiB of kept lists (the default
 * {@code TWOFOLD_LIST_CACHE_MB}); then ranking latency on 20,000 items at rank 64.
 */
public final class ServingFootprint {

    private static final long SEED = 7L;
    private static final int WARMUP_REQUESTS = 3_000;
    private static final int MEASURED_REQUESTS = 5_000;
    private static final long MIB = 1L << 20;
    /** Requests in flight while the kept lists are filled, so the engine scores them in full batches. */
    private static final int IN_FLIGHT = 256;

    private ServingFootprint() {
    }

    public static void main(String[] args) {
        int users = args.length > 0 ? Integer.parseInt(args[0]) : 1_000_000;
        int items = args.length > 1 ? Integer.parseInt(args[1]) : 100_000;
        int k = args.length > 2 ? Integer.parseInt(args[2]) : 64;
        int perUser = args.length > 3 ? Integer.parseInt(args[3]) : 20;
        boolean shared = args.length > 4 && args[4].equals("shared");
        int freshUsers = args.length > 5 ? Integer.parseInt(args[5]) : 100_000;
        int listMib = args.length > 6 ? Integer.parseInt(args[6]) : ServiceSettings.DEFAULT_LIST_CACHE_MB;

        long before = usedHeap();
        ServingModel model = build(users, items, k, perUser, SEED, shared);
        long retained = usedHeap() - before;
        long raw = 4L * ((long) users * k * (shared ? 2 : 1) + (long) items * k + users + items);
        long target = raw * 3 / 2 + 200 * MIB;
        System.out.printf("footprint: %,d users x %,d items, rank %d, %,d ratings, %s%n", users, items, k,
                (long) users * perUser, shared ? "shared coupling (Z kept)" : "no Z");
        System.out.printf("  raw factor bytes %,d MiB; retained heap %,d MiB (%.2fx raw); target 1.5x raw + 200 MiB"
                + " = %,d MiB -> %s%n", raw / MIB, retained / MIB, (double) retained / raw, target / MIB,
                retained <= target ? "within" : "OVER");
        System.out.println("  " + model);

        LiveModels live = new LiveModels(freshUsers, listMib * MIB);
        live.install(model);
        SplittableRandom picks = new SplittableRandom(SEED);
        List<UserHistory> batch = new java.util.ArrayList<>();
        for (int u = 0; u < freshUsers; u++) {
            int[] rated = new int[perUser];
            float[] ratings = new float[perUser];
            for (int r = 0; r < perUser; r++) {
                rated[r] = picks.nextInt(items);
                ratings[r] = 1 + picks.nextInt(5);
            }
            Arrays.sort(rated);
            batch.add(new UserHistory("cook-" + u, u, rated, ratings, new int[0], new float[0]));
            if (batch.size() == 1000) {
                live.foldIn(batch);
                batch.clear();
            }
        }
        live.foldIn(batch);
        long withFresh = usedHeap() - before;
        System.out.printf("  with %,d fresh users of %d ratings each: retained heap %,d MiB (%,d bytes per fresh user)"
                + " -> %s%n", live.current().fresh().size(), perUser, withFresh / MIB,
                freshUsers == 0 ? 0 : (withFresh - retained) / freshUsers, withFresh <= target ? "within" : "OVER");

        // every slot of the kept lists taken: users after the fresh ones, one per slot
        Ranker ranker = new Ranker();
        LiveModel now = live.current();
        int kept = Math.min(now.lists().slots(), users - freshUsers);
        List<CompletableFuture<Recommendation>> inFlight = new ArrayList<>();
        for (int j = 0; j < kept; j++) {
            inFlight.add(now.recommendLater(ranker, "cook-" + (freshUsers + j), 10, List.of()));
            if (inFlight.size() == IN_FLIGHT || j == kept - 1) {
                inFlight.forEach(CompletableFuture::join);
                inFlight.clear();
            }
        }
        long withLists = usedHeap() - before;
        System.out.printf("  and kept lists for %,d users (%d MiB budget, %,d misses): retained heap %,d MiB (%,d bytes"
                + " per kept user) -> %s%n", kept, listMib, live.listStats().misses(), withLists / MIB,
                kept == 0 ? 0 : (withLists - withFresh) / kept, withLists <= target ? "within" : "OVER");
        live = null;
        model = null;
        now = null;

        ServingModel small = build(20_000, 20_000, 64, perUser, SEED + 1, false);
        SplittableRandom random = new SplittableRandom(SEED);
        for (int r = 0; r < WARMUP_REQUESTS; r++) {
            ranker.recommend(small, "cook-" + random.nextInt(20_000), 10, List.of());
        }
        long[] nanos = new long[MEASURED_REQUESTS];
        for (int r = 0; r < MEASURED_REQUESTS; r++) {
            String user = "cook-" + random.nextInt(20_000);
            long t0 = System.nanoTime();
            ranker.recommend(small, user, 10, List.of());
            nanos[r] = System.nanoTime() - t0;
        }
        Arrays.sort(nanos);
        System.out.printf("ranking top 10 of 20,000 items at rank 64, one thread: p50 %d us, p99 %d us%n",
                nanos[MEASURED_REQUESTS / 2] / 1000, nanos[MEASURED_REQUESTS * 99 / 100] / 1000);
    }

    private static ServingModel build(int users, int items, int k, int perUser, long seed, boolean shared) {
        return SyntheticModel.build(users, items, k, perUser, seed, false, shared);
    }

    private static long usedHeap() {
        for (int i = 0; i < 3; i++) {
            System.gc();
        }
        return ManagementFactory.getMemoryMXBean().getHeapMemoryUsage().getUsed();
    }
}
