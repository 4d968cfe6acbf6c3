package dev.twofold.trainer.publish;

import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import dev.twofold.db.ingest.ImportMode;
import dev.twofold.db.ingest.ImportReport;
import dev.twofold.db.ingest.Importer;
import dev.twofold.db.ingest.RatingScale;
import dev.twofold.trainer.planted.CommunitySpec;
import dev.twofold.trainer.planted.CookingCommunity;
import dev.twofold.trainer.planted.PlantedCommunity;
import java.io.BufferedWriter;
import java.io.IOException;
import java.lang.management.ManagementFactory;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.Locale;
import java.util.Map;
import java.util.SplittableRandom;

/**
 * The nightly cycle at the size of the contract: {@value #RATINGS} ratings and {@value #TRUST} trust
 * edges of a generated cooking community, imported into an embedded PostgreSQL in a fresh data
 * directory (append into empty tables, then the same files with {@code --mode replace}), then two
 * retrains with the default settings — the first with no live model, the second judged against the
 * first (the nightly case: the live model is evaluated on the same held-out rows too). Prints the
 * time of every phase. Not a test:
 *
 * <pre>JAVA_OPTS="-Xms2g -Xmx8g" deploy/bench trainer dev.twofold.trainer.publish.RetrainBenchmark [dataDir]</pre>
 *
 * Targets (PRODUCT.md): import ≤ 10 s; train, evaluate and store a model ≤ 60 s on 2 cores.
 */
public final class RetrainBenchmark {

    static final int RATINGS = 1_000_000;
    static final int TRUST = 100_000;
    /** 30 typical ratings per cook: about 1.2 M generated, of which {@value #RATINGS} are written. */
    static final int COOKS = 40_000;
    static final int RECIPES = 20_000;
    static final long SEED = 20_261_201L;

    private RetrainBenchmark() {
    }

    public static void main(String[] args) throws IOException {
        Path dir = args.length > 0 ? Path.of(args[0]) : Files.createTempDirectory("twofold-retrain-bench-");
        Files.createDirectories(dir);
        Path ratings = dir.resolve("ratings.csv");
        Path trust = dir.resolve("trust.csv");
        long t = System.nanoTime();
        int[] written = writeCommunity(ratings, trust);
        System.out.printf(Locale.ROOT, "generated %,d ratings and %,d trust edges of %,d cooks and %,d recipes: %.1f s%n",
                written[0], written[1], COOKS, RECIPES, (System.nanoTime() - t) / 1e9);

        try (Database db = Database.open(DatabaseSettings.embedded(dir.resolve("data")))) {
            Importer importer = new Importer(db, RatingScale.DEFAULT);
            for (ImportMode mode : new ImportMode[] {ImportMode.APPEND, ImportMode.REPLACE}) {
                ImportReport r = importer.importFiles(ratings, trust, mode);
                System.out.printf(Locale.ROOT, "import --mode %-7s %,d ratings written, %,d deleted; %,d trust written, %,d"
                        + " deleted: %.2f s%n", mode.label(), r.ratingsWritten(), r.ratingsDeleted(), r.trustWritten(),
                        r.trustDeleted(), r.took().toNanos() / 1e9);
            }
            for (String round : new String[] {"first train (no live model)", "nightly train (against the live model)"}) {
                long cpu = processCpuNanos();
                TrainReport report = new TrainJob(db, TrainSettings.defaults()).run();
                cpu = processCpuNanos() - cpu;
                StringBuilder phases = new StringBuilder();
                for (Map.Entry<String, Duration> e : report.phases().entrySet()) {
                    phases.append(String.format(Locale.ROOT, " %s %.2f", e.getKey(), e.getValue().toNanos() / 1e9));
                }
                System.out.printf(Locale.ROOT, "%s: model %d %s, RMSE %.4f, precision@%d %.4f; total %.1f s wall, %.1f s CPU"
                        + " of this JVM (PostgreSQL not counted);%s%n", round, report.modelId(), report.decision().label(),
                        report.model().overall().rmse(), report.k(), report.model().overall().precision(),
                        report.total().toNanos() / 1e9, cpu / 1e9, phases);
            }
        }
    }

    /** CPU time of this JVM, all threads: on a shared machine it bounds what two idle cores would take (CPU / 2 .. CPU). */
    private static long processCpuNanos() {
        return ((com.sun.management.OperatingSystemMXBean) ManagementFactory.getOperatingSystemMXBean()).getProcessCpuTime();
    }

    /** Writes {@value #RATINGS} ratings and {@value #TRUST} trust edges sampled (seeded) from a planted community. */
    private static int[] writeCommunity(Path ratings, Path trust) throws IOException {
        PlantedCommunity c = CookingCommunity.generate(CommunitySpec.defaults().withSize(COOKS, RECIPES).withSeed(SEED));
        if (c.numRatings() < RATINGS || c.numFollows() < TRUST) {
            throw new IllegalStateException("the community has " + c.numRatings() + " ratings and " + c.numFollows()
                    + " follows; raise COOKS");
        }
        SplittableRandom random = new SplittableRandom(SEED);
        int[] ratingRows = sample(c.numRatings(), RATINGS, random);
        int[] trustRows = sample(c.numFollows(), TRUST, random);
        try (BufferedWriter w = Files.newBufferedWriter(ratings, StandardCharsets.UTF_8)) {
            w.write("user,item,rating,time\n");
            for (int p : ratingRows) {
                w.write(c.cookId(c.ratingUser()[p]) + "," + c.recipeId(c.ratingItem()[p]) + "," + c.rating()[p] + ","
                        + c.ratingTime()[p] + "\n");
            }
        }
        try (BufferedWriter w = Files.newBufferedWriter(trust, StandardCharsets.UTF_8)) {
            w.write("truster,trustee,weight\n");
            for (int p : trustRows) {
                w.write(c.cookId(c.truster()[p]) + "," + c.cookId(c.trustee()[p]) + "," + c.trustWeight()[p] + "\n");
            }
        }
        return new int[] {ratingRows.length, trustRows.length};
    }

    /** {@code k} distinct positions of {@code 0..n-1}, in increasing order (selection sampling, Knuth's algorithm S). */
    private static int[] sample(int n, int k, SplittableRandom random) {
        int[] out = new int[k];
        int chosen = 0;
        for (int i = 0; i < n && chosen < k; i++) {
            if (random.nextInt(n - i) < k - chosen) {
                out[chosen++] = i;
            }
        }
        return out;
    }
}
