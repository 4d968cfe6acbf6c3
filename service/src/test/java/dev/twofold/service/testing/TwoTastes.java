package dev.twofold.service.testing;

import dev.twofold.db.connect.Database;
import dev.twofold.db.ingest.RatingInput;
import dev.twofold.db.ingest.RatingScale;
import dev.twofold.db.ingest.RatingWriter;
import dev.twofold.db.ingest.TrustInput;
import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.publish.TrainJob;
import dev.twofold.trainer.publish.TrainReport;
import dev.twofold.trainer.publish.TrainSettings;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;

/**
 * An invented neighbourhood for tests: sweet cooks love cakes and dislike stews, savoury cooks the
 * opposite, and cooks trust a few others of their own taste. Written through the same batch writer
 * the API uses, then trained by the real train job (shared coupling), so the model has real P, Q,
 * Z and biases.
 */
public final class TwoTastes {

    public static final int COOKS_PER_TASTE = 24;
    public static final int RECIPES_PER_TASTE = 16;
    public static final int LOVED_PER_COOK = 8;
    public static final int DISLIKED_PER_COOK = 4;
    public static final int TRUSTED_PER_COOK = 3;
    public static final int RANK = 4;
    private static final long SEED = 77L;

    private TwoTastes() {
    }

    public static String sweetCook(int n) {
        return "sweet-cook-" + n;
    }

    public static String savouryCook(int n) {
        return "savoury-cook-" + n;
    }

    public static String cake(int n) {
        return "cake-" + n;
    }

    public static String stew(int n) {
        return "stew-" + n;
    }

    public static boolean isCake(String item) {
        return item.startsWith("cake-");
    }

    /** Writes the ratings and trust edges. */
    public static void write(Database db) {
        SplittableRandom random = new SplittableRandom(SEED);
        List<RatingInput> ratings = new ArrayList<>();
        List<TrustInput> trust = new ArrayList<>();
        for (int taste = 0; taste < 2; taste++) {
            for (int c = 0; c < COOKS_PER_TASTE; c++) {
                String cook = taste == 0 ? sweetCook(c) : savouryCook(c);
                for (int j : distinct(random, RECIPES_PER_TASTE, LOVED_PER_COOK)) {
                    ratings.add(new RatingInput(cook, taste == 0 ? cake(j) : stew(j), 4 + random.nextInt(2)));
                }
                for (int j : distinct(random, RECIPES_PER_TASTE, DISLIKED_PER_COOK)) {
                    ratings.add(new RatingInput(cook, taste == 0 ? stew(j) : cake(j), 1 + random.nextInt(2)));
                }
                for (int other : distinct(random, COOKS_PER_TASTE, TRUSTED_PER_COOK + 1)) {
                    if (other != c && trust.stream().filter(t -> t.truster().equals(cook)).count() < TRUSTED_PER_COOK) {
                        trust.add(new TrustInput(cook, taste == 0 ? sweetCook(other) : savouryCook(other)));
                    }
                }
            }
        }
        RatingWriter writer = new RatingWriter(db, RatingScale.DEFAULT);
        writer.upsertRatings(ratings);
        writer.upsertTrust(trust);
    }

    /** Trains, stores and promotes a model on what is in the database now, with the trainer's default coupling. */
    public static TrainReport train(Database db, long seed) {
        return train(db, seed, FitSettings.DEFAULT_COUPLING);
    }

    /** Trains, stores and promotes a model with the given trust coupling (and its default trust weight). */
    public static TrainReport train(Database db, long seed, Coupling coupling) {
        TrainSettings settings = TrainSettings.defaults().withFit(FitSettings.defaults().withRank(RANK).withEpochs(8)
                .withSeed(seed).withCoupling(coupling).withTrust(coupling.defaultTrustWeight(),
                        FitSettings.DEFAULT_TRUST_ALPHA));
        return new TrainJob(db, settings).run();
    }

    /**
     * Stores a copy of the active version's factors as a new candidate version (not promoted) and
     * returns its id: a second model to switch to.
     */
    public static long copyActiveAsCandidate(Database db) {
        dev.twofold.db.registry.ModelRegistry registry = new dev.twofold.db.registry.ModelRegistry(db);
        dev.twofold.db.registry.ModelHeader active = registry.active().orElseThrow();
        long id = registry.create(active);
        registry.storeFactors(id, registry.loadFactors(active.id()));
        registry.finish(id, dev.twofold.db.registry.ModelRegistry.CANDIDATE, active.metricsJson(), null);
        return id;
    }

    private static int[] distinct(SplittableRandom random, int range, int count) {
        int[] all = new int[range];
        for (int i = 0; i < range; i++) {
            all[i] = i;
        }
        for (int i = 0; i < count; i++) {
            int j = i + random.nextInt(range - i);
            int t = all[i];
            all[i] = all[j];
            all[j] = t;
        }
        return java.util.Arrays.copyOf(all, count);
    }
}
