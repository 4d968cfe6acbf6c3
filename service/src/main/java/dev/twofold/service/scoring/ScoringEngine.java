package dev.twofold.service.scoring;

import dev.twofold.service.model.ItemPanels;
import dev.twofold.service.model.ServingModel;
import java.util.Arrays;
import java.util.List;
import java.util.SplittableRandom;
import java.util.concurrent.CompletableFuture;
import java.util.concurrent.CompletionException;
import java.util.concurrent.ConcurrentLinkedDeque;
import java.util.concurrent.ConcurrentLinkedQueue;
import java.util.concurrent.CopyOnWriteArrayList;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.atomic.AtomicInteger;
import java.util.concurrent.locks.LockSupport;

/**
 * Scores every item for many requests at once and keeps each request's best few.
 *
 * <p><b>Why batches.</b> Ranking one user reads all of Q (20,000 items × rank 64 = 5 MB) for
 * n·k multiply-adds; done request by request, memory traffic and loop overhead bound a core to a
 * few thousand requests a second. Here concurrent requests are scored together: one pass over Q,
 * block of {@value #BLOCK_PANELS} panels ({@link ItemPanels}) by block, each block (64 KiB at
 * k = 64) scored for every request of the batch while it sits in the core's cache, four requests
 * per SIMD pass ({@link BlockKernel}). A request's best {@code count} items are kept in a bounded
 * heap ({@link TopK}) as the blocks go by; an item is looked up in the request's sorted skip list
 * (rated and excluded items) only when its score would enter the heap. Cost per batch:
 * O(n·k·batch) arithmetic, O(n·k) reads of Q, O(n·batch) comparisons.
 *
 * <p><b>How requests meet.</b> {@code scorers} scoring threads (one per core by default, started
 * on the first request) take the queued jobs, up to {@value #MAX_BATCH} of the same model at a
 * time, and score them in one pass. A request never holds a thread while it waits: {@link
 * #rankLater} returns a future that a scoring thread completes, so every request in flight can
 * join the next batch (the HTTP layer answers from that thread; see {@code HttpApi}), and the
 * blocking {@link #rank} and {@link #similar} simply wait for it. One scoring thread is woken
 * when nobody is scoring; another joins only when at least {@value #EXTRA_SCORER_BACKLOG} jobs
 * wait, because a lone user reads all of Q for itself (bound by cache bandwidth, about twice the
 * cost per user of a batch of four). Idle scoring threads park; nothing spins.
 *
 * <p><b>Padding.</b> The SIMD kernel scores users four at a time; a lone user costs about what two
 * cost in a group of four (it reads Q for itself). So a batch of 4g + 2 or 4g + 3 users is padded
 * with zero vectors to 4(g + 1), whose results are dropped; only a single leftover user is
 * scored alone.
 *
 * <p><b>Warm-up.</b> Until the JIT has compiled the kernel, the Vector API runs its portable
 * fallback, some sixty times slower; under full load the compiler thread then gets a small share
 * of the cores and a cold service answers slowly for tens of seconds. {@link #warmUp} scores a few
 * hundred made-up batches against the first model before it takes traffic.
 *
 * <p>Thread-safe. Jobs of different models (during a swap) are never batched together.
 */
public final class ScoringEngine {

    /** Most jobs scored in one pass over Q. */
    static final int MAX_BATCH = 16;
    /** Panels per cache block: 16 × 16 items × k floats = 64 KiB at k = 64. */
    static final int BLOCK_PANELS = 16;
    /** Jobs that must be waiting before a second (third, ...) thread starts scoring beside the first. */
    static final int EXTRA_SCORER_BACKLOG = 4;
    /** User-item scores the warm-up computes at least (about 0.2 s once compiled, at rank 64). */
    static final long WARM_UP_SCORES = 40_000_000L;
    /** The warm-up stops after this long even if it has not computed {@link #WARM_UP_SCORES}. */
    private static final long WARM_UP_NANOS = TimeUnit.SECONDS.toNanos(3);
    /** Batch sizes the warm-up cycles through: full, padded, a group and a lone user, and a lone user. */
    private static final int[] WARM_UP_BATCHES = {MAX_BATCH, 7, 5, 1};
    /** Compiled code is per JVM: the first warm-up in a process is enough for every engine in it. */
    private static final AtomicBoolean WARM = new AtomicBoolean();
    private static final int[] NO_SKIP = new int[0];
    /** An idle scoring thread re-checks the queue at least this often (a safety net; submits wake it). */
    private static final long PARK_NANOS = TimeUnit.MILLISECONDS.toNanos(50);

    private final BlockKernel kernel;
    private final int scorers;
    private final ConcurrentLinkedDeque<Job> pending = new ConcurrentLinkedDeque<>();
    /** Jobs in {@link #pending}, kept beside it (the deque's size() walks the whole deque). */
    private final AtomicInteger queued = new AtomicInteger();
    /** Scoring threads parked for want of work; a submit takes one out to wake it. */
    private final ConcurrentLinkedQueue<Thread> sleeping = new ConcurrentLinkedQueue<>();
    /** Scoring threads not in {@link #sleeping} (started ones count as awake until they park). */
    private final AtomicInteger awake = new AtomicInteger();
    private final AtomicBoolean started = new AtomicBoolean();
    private final List<Thread> threads = new CopyOnWriteArrayList<>();
    private volatile boolean closed;

    /** One scoring thread per available processor, with the fastest kernel this JVM can run. */
    public ScoringEngine() {
        this(Runtime.getRuntime().availableProcessors(), BlockKernels.best());
    }

    ScoringEngine(int scorers, BlockKernel kernel) {
        if (scorers < 1) {
            throw new IllegalArgumentException("scorers " + scorers + " must be >= 1");
        }
        this.kernel = kernel;
        this.scorers = scorers;
    }

    /** Whether the SIMD kernel is in use (the JVM resolved {@code jdk.incubator.vector}). */
    public boolean simd() {
        return kernel instanceof VectorBlockKernel;
    }

    /** What scores the items: the kernel in use, for the start-up log. */
    public String description() {
        return kernel.description() + ", up to " + MAX_BATCH + " requests per pass over Q, " + scorers
                + " scoring threads";
    }

    /**
     * The best {@code count} items by b_i + x·q_i, where x is the k-vector at {@code x[xOffset]},
     * leaving out the items in {@code skip[skipFrom..skipTo)} (serving item indices, sorted
     * ascending). Equal scores rank the lower item index first. Blocks until scored.
     */
    public Ranked rank(ServingModel model, float[] x, int xOffset, int count, int[] skip, int skipFrom, int skipTo) {
        return await(rankLater(model, x, xOffset, count, skip, skipFrom, skipTo));
    }

    /**
     * {@link #rank} without blocking: the future completes on a scoring thread, and whatever is
     * chained to it without an executor runs there too, so it must not block. The caller must not
     * change {@code x} or {@code skip} before it completes.
     */
    public CompletableFuture<Ranked> rankLater(ServingModel model, float[] x, int xOffset, int count, int[] skip,
            int skipFrom, int skipTo) {
        Job job = new Job(model, x, xOffset, 1f, false, -1, count, skip, skipFrom, skipTo);
        submit(job);
        return job.result;
    }

    /**
     * The best {@code count} items by cosine similarity of their factors with those of
     * {@code item}, leaving out the item itself and {@code skip[skipFrom..skipTo)} (sorted). Items
     * with all-zero factors have similarity 0.
     */
    public Ranked similar(ServingModel model, int item, int count, int[] skip, int skipFrom, int skipTo) {
        return await(similarLater(model, item, count, skip, skipFrom, skipTo));
    }

    /** {@link #similar} without blocking, on the terms of {@link #rankLater}. */
    public CompletableFuture<Ranked> similarLater(ServingModel model, int item, int count, int[] skip, int skipFrom,
            int skipTo) {
        Job job = new Job(model, model.itemFactors(), item * model.rank(), model.inverseNorms()[item], true, item,
                count, skip, skipFrom, skipTo);
        submit(job);
        return job.result;
    }

    /**
     * Stops the scoring threads once they finish the batch in hand; jobs still queued, and any
     * submitted later, fail with an {@link IllegalStateException}. Safe to call again.
     */
    public void close() {
        closed = true;
        for (Thread t : threads) {
            LockSupport.unpark(t);
        }
        failQueued();
    }

    /**
     * Has the JIT compile the scoring path before requests arrive: scores made-up users (random
     * vectors, top 10) against {@code model} in batches of {@value #MAX_BATCH}, 7, 5 and 1 on the
     * calling thread until {@value #WARM_UP_SCORES} user-item scores or 3 s. Does nothing after the
     * first call in this JVM.
     *
     * @return batches scored (0 when already warm)
     */
    public int warmUp(ServingModel model) {
        if (model.numItems() == 0 || !WARM.compareAndSet(false, true)) {
            return 0;
        }
        int k = model.rank();
        float[] x = new float[MAX_BATCH * k];
        SplittableRandom random = new SplittableRandom(k);
        for (int j = 0; j < x.length; j++) {
            x[j] = (float) (random.nextDouble() - 0.5);
        }
        int[] offsets = new int[MAX_BATCH];
        for (int b = 0; b < MAX_BATCH; b++) {
            offsets[b] = b * k;
        }
        // every third item skipped, so the skip test is compiled for lists that hold something
        int[] skip = new int[(model.numItems() + 2) / 3];
        for (int j = 0; j < skip.length; j++) {
            skip[j] = 3 * j;
        }
        Scratch s = new Scratch();
        long start = System.nanoTime();
        long scores = 0;
        int batches = 0;
        while (scores < WARM_UP_SCORES && System.nanoTime() - start < WARM_UP_NANOS) {
            int size = WARM_UP_BATCHES[batches % WARM_UP_BATCHES.length];
            rankTogether(s, model, x, Arrays.copyOf(offsets, size), 10, batches % 2 == 0 ? skip : NO_SKIP);
            scores += (long) size * model.numItems();
            batches++;
        }
        return batches;
    }

    /**
     * Ranks the users whose vectors start at {@code x[offsets[b]]} as one batch on the calling
     * thread, bypassing the queue: the best {@code count} items of each, leaving out the items in
     * {@code skip} (sorted). For the warm-up and for tests of every batch size.
     */
    Ranked[] rankTogether(ServingModel model, float[] x, int[] offsets, int count, int[] skip) {
        return rankTogether(new Scratch(), model, x, offsets, count, skip);
    }

    private Ranked[] rankTogether(Scratch s, ServingModel model, float[] x, int[] offsets, int count, int[] skip) {
        if (offsets.length == 0 || offsets.length > MAX_BATCH) {
            throw new IllegalArgumentException(offsets.length + " users in a batch; 1.." + MAX_BATCH + " fit");
        }
        for (int b = 0; b < offsets.length; b++) {
            s.batch[b] = new Job(model, x, offsets[b], 1f, false, -1, count, skip, 0, skip.length);
        }
        Ranked[] out = new Ranked[offsets.length];
        try {
            score(s, offsets.length);
            for (int b = 0; b < offsets.length; b++) {
                out[b] = new Ranked(s.batch[b].items, s.batch[b].scores);
            }
        } finally {
            Arrays.fill(s.batch, null);
        }
        return out;
    }

    /** Waits for {@code result}; a failure is rethrown as itself, not wrapped. */
    static <T> T await(CompletableFuture<T> result) {
        try {
            return result.join();
        } catch (CompletionException e) {
            throw e.getCause() instanceof RuntimeException cause ? cause : e;
        }
    }

    private void submit(Job job) {
        if (job.count < 0) {
            throw new IllegalArgumentException("count " + job.count + " must be >= 0");
        }
        if (!started.get() && started.compareAndSet(false, true)) {
            startScorers();
        }
        queued.incrementAndGet();
        pending.offerLast(job);
        if (closed) {
            failQueued(); // close() may have swept the queue before this job arrived
        } else if (awake.get() == 0 || queued.get() >= EXTRA_SCORER_BACKLOG) {
            wakeOne();
        }
    }

    private void startScorers() {
        awake.set(scorers);
        for (int c = 0; c < scorers; c++) {
            Thread t = new Thread(this::scoreUntilClosed, "twofold-scoring-" + c);
            t.setDaemon(true);
            threads.add(t);
            t.start();
        }
    }

    /** Wakes a parked scoring thread, if there is one. */
    private void wakeOne() {
        Thread t = sleeping.poll();
        if (t != null) {
            awake.incrementAndGet();
            LockSupport.unpark(t);
        }
    }

    /**
     * A scoring thread's life: score batches while jobs wait; when none does, go on the sleeping
     * list, look once more (a job queued just before that saw this thread awake and did not wake
     * anyone), and park. Whoever wakes a thread takes it off the list first; a thread that wakes
     * by itself (timeout, spurious) takes itself off.
     */
    private void scoreUntilClosed() {
        Scratch s = new Scratch();
        Thread me = Thread.currentThread();
        while (!closed) {
            int size = drain(s);
            if (size == 0) {
                awake.decrementAndGet();
                sleeping.offer(me);
                if (pending.isEmpty() && !closed) {
                    LockSupport.parkNanos(this, PARK_NANOS);
                }
                if (sleeping.remove(me)) {
                    awake.incrementAndGet();
                }
                continue;
            }
            if (queued.get() >= EXTRA_SCORER_BACKLOG) {
                wakeOne(); // enough left for another batch: score it on another core meanwhile
            }
            scoreAndComplete(s, size);
        }
    }

    /** Scores a drained batch and completes its jobs (running what callers chained to them). */
    private void scoreAndComplete(Scratch s, int size) {
        IllegalStateException failure = null;
        try {
            score(s, size);
        } catch (RuntimeException | Error e) {
            failure = new IllegalStateException("scoring failed in the batch that held this request", e);
        }
        for (int b = 0; b < size; b++) {
            Job job = s.batch[b];
            s.batch[b] = null;
            if (failure == null) {
                job.result.complete(new Ranked(job.items, job.scores));
            } else {
                job.result.completeExceptionally(failure);
            }
        }
    }

    private void failQueued() {
        Job job;
        while ((job = pending.pollFirst()) != null) {
            queued.decrementAndGet();
            job.result.completeExceptionally(new IllegalStateException("the scoring engine is closed"));
        }
    }

    /** Takes up to MAX_BATCH queued jobs of the same model as the first; returns how many. */
    private int drain(Scratch s) {
        Job first = pending.pollFirst();
        if (first == null) {
            return 0;
        }
        s.batch[0] = first;
        int size = 1;
        while (size < MAX_BATCH) {
            Job next = pending.pollFirst();
            if (next == null) {
                break;
            }
            if (next.model != first.model) {
                pending.offerFirst(next);
                break;
            }
            s.batch[size++] = next;
        }
        queued.addAndGet(-size);
        return size;
    }

    private void score(Scratch s, int size) {
        ServingModel model = s.batch[0].model;
        ItemPanels panels = model.panels();
        int k = model.rank();
        int n = model.numItems();
        s.fit(k);
        for (int b = 0; b < size; b++) {
            Job job = s.batch[b];
            for (int f = 0; f < k; f++) {
                s.x[b * k + f] = job.x[job.xOffset + f] * job.scale;
            }
            s.best[b].reset(Math.min(job.count, n));
        }
        int lanes = padded(size, kernel.group());
        Arrays.fill(s.x, size * k, lanes * k, 0f);
        float[] bias = model.itemBias();
        float[] inverseNorms = model.inverseNorms();
        int numPanels = panels.panels();
        for (int from = 0; from < numPanels; from += BLOCK_PANELS) {
            int to = Math.min(from + BLOCK_PANELS, numPanels);
            kernel.dot(panels, from, to, s.x, lanes, s.out);
            int stride = (to - from) * ItemPanels.WIDTH;
            int first = from * ItemPanels.WIDTH;
            int last = Math.min(to * ItemPanels.WIDTH, n);
            for (int b = 0; b < size; b++) {
                Job job = s.batch[b];
                keepBest(job, s.best[b], s.out, b * stride - first, first, last, job.cosine ? inverseNorms : bias,
                        s.candidates);
            }
        }
        for (int b = 0; b < size; b++) {
            Job job = s.batch[b];
            TopK best = s.best[b];
            int[] items = new int[best.size()];
            float[] scores = new float[items.length];
            best.drainBestFirst(items, scores);
            job.items = items;
            job.scores = scores;
        }
    }

    /**
     * The users to hand the kernel for a batch of {@code size}: rounded up to a whole group when at
     * least two would otherwise be left over (a pass over a group costs about what two lone users
     * cost), as long as that fits the buffers.
     */
    static int padded(int size, int group) {
        int rest = size % group;
        int up = size - rest + group;
        return rest >= 2 && up <= MAX_BATCH ? up : size;
    }

    /**
     * Offers the items {@code first..last} of a block to the job's heap: score = dot + b_i, or
     * dot · 1/‖q_i‖ for cosine jobs. The kernel first picks the items that beat the heap's
     * threshold as it stood at the start of the block (a superset of those that can enter); only
     * those are offered, after the skip check. Items arrive in increasing index order, so one whose
     * score only equals the heap's worst never displaces it (ties go to the lower index).
     */
    private void keepBest(Job job, TopK best, float[] out, int offset, int first, int last, float[] perItem,
            int[] candidates) {
        int found = kernel.above(out, offset, perItem, job.cosine, first, last, best.threshold(), candidates);
        for (int c = 0; c < found; c++) {
            int i = candidates[c];
            float score = job.cosine ? out[offset + i] * perItem[i] : out[offset + i] + perItem[i];
            if (score > best.threshold() && !job.skips(i)) {
                best.offer(i, score);
            }
        }
    }

    /** One request: what to score, and where the answer goes. */
    private static final class Job {
        final ServingModel model;
        final float[] x;
        final int xOffset;
        final float scale;
        final boolean cosine;
        final int self;
        final int count;
        final int[] skip;
        final int skipFrom;
        final int skipTo;
        final CompletableFuture<Ranked> result = new CompletableFuture<>();
        int[] items;
        float[] scores;

        Job(ServingModel model, float[] x, int xOffset, float scale, boolean cosine, int self, int count, int[] skip,
                int skipFrom, int skipTo) {
            this.model = model;
            this.x = x;
            this.xOffset = xOffset;
            this.scale = scale;
            this.cosine = cosine;
            this.self = self;
            this.count = count;
            this.skip = skip;
            this.skipFrom = skipFrom;
            this.skipTo = skipTo;
        }

        boolean skips(int item) {
            return item == self || (skipTo > skipFrom && Arrays.binarySearch(skip, skipFrom, skipTo, item) >= 0);
        }
    }

    /** One scoring thread's buffers, grown to the largest rank seen. */
    private static final class Scratch {
        final Job[] batch = new Job[MAX_BATCH];
        final TopK[] best = new TopK[MAX_BATCH];
        float[] x = new float[0];
        float[] out = new float[0];
        final int[] candidates = new int[BLOCK_PANELS * ItemPanels.WIDTH];

        Scratch() {
            for (int b = 0; b < MAX_BATCH; b++) {
                best[b] = new TopK(16);
            }
        }

        void fit(int k) {
            if (x.length < MAX_BATCH * k) {
                x = new float[MAX_BATCH * k];
            }
            int outLength = MAX_BATCH * BLOCK_PANELS * ItemPanels.WIDTH;
            if (out.length < outLength) {
                out = new float[outLength];
            }
        }
    }
}
