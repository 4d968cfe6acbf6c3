package dev.twofold.launch;

import dev.twofold.db.access.ApiKeys;
import dev.twofold.db.access.KeyRole;
import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import dev.twofold.db.ingest.ImportReport;
import dev.twofold.db.ingest.Importer;
import dev.twofold.db.ingest.RatingScale;
import dev.twofold.service.ServeCommand;
import dev.twofold.service.ServiceSettings;
import dev.twofold.trainer.planted.CommunitySpec;
import dev.twofold.trainer.planted.CookingCommunity;
import dev.twofold.trainer.planted.DemoDataCommand;
import dev.twofold.trainer.planted.PlantedCommunity;
import dev.twofold.trainer.publish.TrainJob;
import dev.twofold.trainer.publish.TrainReport;
import dev.twofold.trainer.publish.TrainSettings;
import java.io.PrintWriter;
import java.nio.file.Path;
import java.util.Locale;
import java.util.Map;
import java.util.concurrent.Callable;
import picocli.CommandLine;
import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/**
 * {@code twofold demo}: the whole path once, on the database the environment names (the embedded
 * one by default) — generate the cooking community, import it, train and promote a model, make an
 * API key with the role {@code write} (reads and writes; named {@value #KEY_NAME}, replacing the
 * one an earlier demo made), then serve until stopped, printing the URL, the key and requests to try.
 */
@Command(name = "demo", mixinStandardHelpOptions = true,
        description = "Generate demo data (cooks rating recipes and following cooks), import it, train a model and serve it.",
        footerHeading = "%nEnvironment:%n",
        footer = {
            "  TWOFOLD_DATA_DIR    embedded database and demo files (default ./twofold-data)",
            "  TWOFOLD_HTTP_PORT   port to serve on (default " + ServiceSettings.DEFAULT_PORT + ")",
            "  TWOFOLD_DB_URL, TWOFOLD_DB_USER, TWOFOLD_DB_PASSWORD   an external PostgreSQL instead"
        })
final class DemoCommand implements Callable<Integer> {

    /** Name of the key the demo makes; each run revokes the previous run's key of that name. */
    static final String KEY_NAME = "demo";

    @Spec
    CommandSpec spec;

    @Option(names = "--users", paramLabel = "N", description = "number of cooks (default: ${DEFAULT-VALUE})")
    int users = CommunitySpec.DEFAULT_COOKS;

    @Option(names = "--items", paramLabel = "N", description = "number of recipes (default: ${DEFAULT-VALUE})")
    int items = CommunitySpec.DEFAULT_RECIPES;

    @Option(names = "--seed", paramLabel = "S", description = "seed of the generated community (default: ${DEFAULT-VALUE})")
    long seed = CommunitySpec.DEFAULT_SEED;

    @Option(names = "--no-serve", description = "stop after training instead of serving")
    boolean noServe;

    private final Map<String, String> env;

    DemoCommand() {
        this(System.getenv());
    }

    DemoCommand(Map<String, String> env) {
        this.env = env;
    }

    @Override
    public Integer call() throws Exception {
        PrintWriter out = spec.commandLine().getOut();
        DatabaseSettings databaseSettings = DatabaseSettings.fromEnvironment(env);
        ServiceSettings serviceSettings = ServiceSettings.fromEnvironment(env);
        Path demoDir = databaseSettings.dataDir().resolve("demo");

        step(out, "1/4 generating the cooking community into " + demoDir);
        int written = new CommandLine(new DemoDataCommand()).setOut(out).setErr(spec.commandLine().getErr())
                .execute("--out", demoDir.toString(), "--users", Integer.toString(users),
                        "--items", Integer.toString(items), "--seed", Long.toString(seed));
        if (written != 0) {
            return written;
        }
        PlantedCommunity community = CookingCommunity.generate(
                CommunitySpec.defaults().withSize(users, items).withSeed(seed));
        String key;

        // The demo's own connection closes before serving starts: the service opens (or joins) the
        // database itself and is then the only one to close it when stopped.
        try (Database database = Database.open(databaseSettings)) {
            step(out, "2/4 importing into " + database.description());
            ImportReport imported = new Importer(database, RatingScale.DEFAULT)
                    .importFiles(demoDir.resolve("ratings.csv"), demoDir.resolve("trust.csv"));
            out.printf(Locale.ROOT, "imported %,d ratings and %,d trust edges in %.1f s%n", imported.ratingsRead(),
                    imported.trustRead(), imported.took().toMillis() / 1000.0);

            step(out, "3/4 training");
            TrainReport report = new TrainJob(database, TrainSettings.defaults()).run();
            out.print(report.summary());

            ApiKeys keys = new ApiKeys(database);
            keys.revoke(KEY_NAME);
            key = keys.create(KEY_NAME, KeyRole.WRITE).key();
        }
        out.println();
        out.println("API key '" + KEY_NAME + "' (role write: recommendations, predictions, similar items, ratings,"
                + " trust), shown only now:");
        out.println("  export TWOFOLD_KEY=" + key);
        out.println("Every /v1 request needs it: -H \"Authorization: Bearer $TWOFOLD_KEY\". Make others with"
                + " twofold keys create --role read|write|admin --name NAME.");
        if (noServe) {
            out.flush();
            return 0;
        }
        String base = "http://localhost:" + (serviceSettings.port() == 0 ? ServiceSettings.DEFAULT_PORT
                : serviceSettings.port());
        step(out, "4/4 serving on " + base + " (Ctrl-C stops)");
        out.println("Try, once it logs that it is serving (after the export above):");
        String auth = "-H \"Authorization: Bearer $TWOFOLD_KEY\"";
        out.printf("  curl -s %s '%s/v1/users/%s/recommendations?count=5'%n", auth, base,
                community.cookId(mostActiveCook(community)));
        out.printf("  curl -s %s '%s/v1/users/%s/recommendations?count=5'    # a newcomer with few ratings%n", auth,
                base, community.cookId(firstNewcomer(community)));
        out.printf("  curl -s %s -X POST %s/v1/predictions -H 'Content-Type: application/json' "
                + "-d '{\"pairs\":[{\"user\":\"%s\",\"item\":\"%s\"}]}'%n", auth, base,
                community.cookId(mostActiveCook(community)), community.recipeId(0));
        out.flush();
        return new ServeCommand().call();
    }

    private static void step(PrintWriter out, String what) {
        out.println("== " + what);
        out.flush();
    }

    private static int mostActiveCook(PlantedCommunity community) {
        int[] count = new int[community.numCooks()];
        for (int u : community.ratingUser()) {
            count[u]++;
        }
        int best = 0;
        for (int u = 1; u < count.length; u++) {
            if (count[u] > count[best]) {
                best = u;
            }
        }
        return best;
    }

    private static int firstNewcomer(PlantedCommunity community) {
        for (int u = 0; u < community.numCooks(); u++) {
            if (community.isNewcomer(u)) {
                return u;
            }
        }
        return 0;
    }
}
