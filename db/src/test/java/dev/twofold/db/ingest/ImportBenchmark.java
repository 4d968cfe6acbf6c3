package dev.twofold.db.ingest;

import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import dev.twofold.db.snapshot.IdDirectory;
import dev.twofold.db.snapshot.Snapshot;
import dev.twofold.db.snapshot.SnapshotReader;
import java.io.BufferedWriter;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Locale;
import java.util.SplittableRandom;

/**
 * Import throughput: {@code RATINGS} ratings and {@code TRUST} trust edges of a generated cooking
 * community into an embedded server (durable settings) in a fresh data directory, then the same files
 * again (everything already stored), then reads the snapshot and the id maps back. Not a test; run with
 *
 * <pre>deploy/bench db dev.twofold.db.ingest.ImportBenchmark [dataDir]</pre>
 */
public final class ImportBenchmark {

    static final int RATINGS = 1_000_000;
    static final int TRUST = 100_000;
    static final int COOKS = 50_000;
    static final int RECIPES = 20_000;
    static final long SEED = 20_240_501L;

    private ImportBenchmark() {
    }

    public static void main(String[] args) throws IOException {
        Path dir = args.length > 0 ? Path.of(args[0]) : Files.createTempDirectory("twofold-import-bench-");
        Files.createDirectories(dir);
        Path ratings = dir.resolve("ratings.csv");
        Path trust = dir.resolve("trust.csv");
        SplittableRandom random = new SplittableRandom(SEED);
        try (BufferedWriter w = Files.newBufferedWriter(ratings, StandardCharsets.UTF_8)) {
            w.write("user,item,rating,time\n");
            for (int i = 0; i < RATINGS; i++) {
                w.write("cook-" + random.nextInt(COOKS) + ",recipe-" + random.nextInt(RECIPES) + "," + (1 + random.nextInt(5))
                        + "," + (1_700_000_000L + random.nextInt(30_000_000)) + "\n");
            }
        }
        try (BufferedWriter w = Files.newBufferedWriter(trust, StandardCharsets.UTF_8)) {
            w.write("truster,trustee,weight\n");
            for (int i = 0; i < TRUST; i++) {
                int a = random.nextInt(COOKS);
                int b = (a + 1 + random.nextInt(COOKS - 1)) % COOKS;
                w.write("cook-" + a + ",cook-" + b + "," + (1 + random.nextInt(10)) / 10.0 + "\n");
            }
        }
        try (Database db = Database.open(DatabaseSettings.embedded(dir.resolve("data")))) {
            Importer importer = new Importer(db, RatingScale.DEFAULT);
            for (String round : new String[] {"empty tables", "same files again"}) {
                ImportReport r = importer.importFiles(ratings, trust);
                System.out.printf(Locale.ROOT, "%-17s %,d ratings read, %,d written; %,d trust read, %,d written; %,d new users,"
                        + " %,d new items: %.2f s%n", round, r.ratingsRead(), r.ratingsWritten(), r.trustRead(), r.trustWritten(),
                        r.newUsers(), r.newItems(), r.took().toNanos() / 1e9);
            }
            for (int round = 0; round < 3; round++) {
                long t0 = System.nanoTime();
                Snapshot snapshot = new SnapshotReader(db).read();
                long t1 = System.nanoTime();
                IdDirectory ids = IdDirectory.load(db);
                long t2 = System.nanoTime();
                System.out.printf(Locale.ROOT, "snapshot of %,d ratings and %,d trust edges: %.2f s; ids of %,d users and %,d items: %.2f s%n",
                        snapshot.numRatings(), snapshot.numTrustEdges(), (t1 - t0) / 1e9, ids.userIds().length, ids.itemIds().length,
                        (t2 - t1) / 1e9);
            }
        }
    }
}
