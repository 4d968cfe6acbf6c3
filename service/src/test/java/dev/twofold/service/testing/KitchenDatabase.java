package dev.twofold.service.testing;

import dev.twofold.db.connect.Database;
import dev.twofold.db.ingest.Importer;
import dev.twofold.db.ingest.RatingScale;
import dev.twofold.db.registry.ModelFactors;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.db.snapshot.IdDirectory;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.BitSet;
import java.util.List;

/**
 * Puts the {@link KitchenModel} community into a real database: its ratings through the CSV
 * importer, then its factors as a model version written through the registry and promoted. The
 * database picks the dense indices, so factors are placed by id.
 */
public final class KitchenDatabase {

    /** Ratings as they reach the database: (user, item, rating). */
    public static final List<String[]> RATINGS = List.of(
            new String[] {"ana", "soup", "5"},
            new String[] {"ana", "stew", "4"},
            new String[] {"ana", "tart", "3"},
            new String[] {"ben", "cake", "2"},
            new String[] {"ben", "bread", "4"},
            new String[] {"cy", "jam", "5"},
            new String[] {"dee", "cake", "5"},
            new String[] {"dee", "salad", "3"},
            new String[] {"eve", "soup", "4"},
            new String[] {"eve", "pie", "3"});

    /** Users whose factors the published model has (the others: no data at training). */
    public static final List<String> USERS_WITH_FACTORS = List.of("ana", "ben", "cy");

    private KitchenDatabase() {
    }

    /** Imports {@link #RATINGS} (the CSV goes under {@code dir}). */
    public static void importRatings(Database db, Path dir) {
        StringBuilder csv = new StringBuilder("user,item,rating\n");
        for (String[] row : RATINGS) {
            csv.append(String.join(",", row)).append('\n');
        }
        try {
            Path file = Files.writeString(dir.resolve("kitchen-ratings.csv"), csv);
            new Importer(db, RatingScale.DEFAULT).importFiles(file, null);
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        }
    }

    /** Writes KitchenModel's factors for the ids now in the directory as a new version, promotes it, returns its id. */
    public static long publishModel(Database db) {
        IdDirectory ids = IdDirectory.load(db);
        int users = ids.userIds().length;
        int items = ids.itemIds().length;
        int k = KitchenModel.K;
        float[] P = new float[users * k];
        float[] bU = new float[users];
        BitSet knownUsers = new BitSet();
        for (int u = 0; u < users; u++) {
            int row = USERS_WITH_FACTORS.indexOf(ids.userIds()[u]);
            if (row >= 0) {
                System.arraycopy(KitchenModel.P, row * k, P, u * k, k);
                bU[u] = KitchenModel.B_U[row];
                knownUsers.set(u);
            }
        }
        float[] Q = new float[items * k];
        float[] bI = new float[items];
        float[] popularity = new float[items];
        BitSet knownItems = new BitSet();
        List<String> servable = List.of(KitchenModel.SERVABLE_ITEMS);
        for (int i = 0; i < items; i++) {
            int row = servable.indexOf(ids.itemIds()[i]);
            if (row >= 0) {
                System.arraycopy(KitchenModel.Q, row * k, Q, i * k, k);
                bI[i] = KitchenModel.B_I[row];
                popularity[i] = KitchenModel.POPULARITY[row];
                knownItems.set(i);
            }
        }
        ModelRegistry registry = new ModelRegistry(db);
        long id = registry.create(KitchenModel.header(0, k, users, items, KitchenModel.MU, KitchenModel.SCALE_MIN,
                KitchenModel.SCALE_MAX));
        registry.storeFactors(id, new ModelFactors(k, P, bU, knownUsers, Q, bI, popularity, knownItems, null));
        registry.finish(id, "candidate", "{}", null);
        registry.promote(id);
        return id;
    }

    /** r̂ before clamping by ids, from KitchenModel's numbers: μ + b_i for users without factors. */
    public static double rawPrediction(String user, String item) {
        int u = USERS_WITH_FACTORS.indexOf(user);
        int i = List.of(KitchenModel.SERVABLE_ITEMS).indexOf(item);
        return KitchenModel.rawPrediction(u, i);
    }
}
