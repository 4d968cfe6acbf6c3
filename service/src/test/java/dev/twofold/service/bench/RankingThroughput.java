package dev.twofold.service.bench;

import dev.twofold.service.model.ServingModel;
import dev.twofold.service.scoring.Ranker;
import java.util.List;
import java.util.Locale;
import java.util.SplittableRandom;
import java.util.concurrent.CountDownLatch;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.atomic.LongAdder;

/**
 * Ranking without HTTP: how many top-10 lists a second the scoring engine makes for random users
 * over 20,000 items at rank 64, with 1 and with 32 request threads (the second lets requests
 * batch), beside the old one-user-at-a-time path (a row-major dot product per item, scalar; its
 * heap is left out, which flatters it slightly). A
 * plain main:
 *
 * <pre>
 * JAVA_OPTS="--add-modules jdk.incubator.vector" deploy/bench service dev.twofold.service.bench.RankingThroughput [seconds]
 * </pre>
 */
public final class RankingThroughput {

    private static final int USERS = 100_000;
    private static final int ITEMS = 20_000;
    private static final int RANK = 64;

    private RankingThroughput() {
    }

    public static void main(String[] args) throws InterruptedException {
        int seconds = args.length > 0 ? Integer.parseInt(args[0]) : 5;
        ServingModel model = ServingBenchmark.syntheticModel(USERS, ITEMS, RANK, 1);
        Ranker ranker = new Ranker();
        System.out.println("engine: " + ranker.engine().description());
        for (int round = 0; round < 2; round++) {
            System.out.printf(Locale.ROOT, "round %d: old path 1 thread %,.0f/s, 32 threads %,.0f/s; engine 1 thread"
                    + " %,.0f/s, 32 threads %,.0f/s%n", round, run(1, seconds, u -> oldPath(model, u)),
                    run(32, seconds, u -> oldPath(model, u)),
                    run(1, seconds, u -> ranker.recommend(model, "cook-" + u, 10, List.of())),
                    run(32, seconds, u -> ranker.recommend(model, "cook-" + u, 10, List.of())));
        }
    }

    private interface Request {
        void run(int user);
    }

    private static double run(int threads, int seconds, Request request) throws InterruptedException {
        LongAdder done = new LongAdder();
        AtomicBoolean stop = new AtomicBoolean();
        CountDownLatch finished = new CountDownLatch(threads);
        for (int t = 0; t < threads; t++) {
            long seed = t;
            Thread thread = new Thread(() -> {
                SplittableRandom random = new SplittableRandom(seed);
                while (!stop.get()) {
                    request.run(random.nextInt(USERS));
                    done.increment();
                }
                finished.countDown();
            });
            thread.setDaemon(true);
            thread.start();
        }
        Thread.sleep(seconds * 1000L);
        stop.set(true);
        finished.await();
        return done.sum() / (double) seconds;
    }

    /** What ranking did before the engine: score every item with a row-major dot product, then a heap. */
    private static float oldPath(ServingModel model, int user) {
        int k = model.rank();
        int n = model.numItems();
        float[] P = model.userFactors();
        float[] Q = model.itemFactors();
        float[] b = model.itemBias();
        float best = Float.NEGATIVE_INFINITY;
        for (int i = 0; i < n; i++) {
            float s0 = 0;
            float s1 = 0;
            float s2 = 0;
            float s3 = 0;
            int p = user * k;
            int q = i * k;
            for (int f = 0; f < k; f += 4) {
                s0 += P[p + f] * Q[q + f];
                s1 += P[p + f + 1] * Q[q + f + 1];
                s2 += P[p + f + 2] * Q[q + f + 2];
                s3 += P[p + f + 3] * Q[q + f + 3];
            }
            best = Math.max(best, b[i] + (s0 + s1) + (s2 + s3));
        }
        return best;
    }
}
