package dev.twofold.trainer.publish;

import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.fit.FitSettings;
import java.io.PrintWriter;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/**
 * {@code twofold train}: fits a model on everything in the database, judges it on held-out ratings
 * against the baselines and the active model, stores it and promotes it when it is at least as good.
 */
@Command(name = "train", mixinStandardHelpOptions = true,
        description = "Fit a model on all ratings and trust edges, evaluate it on held-out ratings against baselines and the active model, store it, and promote it when it is at least as good.")
public final class TrainCommand implements Callable<Integer> {

    @Spec
    CommandSpec spec;

    @Option(names = "--rank", paramLabel = "K", description = "number of latent factors (default: ${DEFAULT-VALUE})")
    int rank = FitSettings.DEFAULT_RANK;

    @Option(names = "--lambda", paramLabel = "L", description = "regularisation per observation (default: ${DEFAULT-VALUE})")
    float lambda = FitSettings.DEFAULT_LAMBDA;

    @Option(names = "--trust-weight", paramLabel = "T", description = "weight of the trust matrix against the ratings (default: ${DEFAULT-VALUE})")
    float trustWeight = FitSettings.DEFAULT_TRUST_WEIGHT;

    @Option(names = "--trust-alpha", paramLabel = "A", description = "confidence of an observed trust edge: 1 + A * weight (default: ${DEFAULT-VALUE})")
    float trustAlpha = FitSettings.DEFAULT_TRUST_ALPHA;

    @Option(names = "--epochs", paramLabel = "N", description = "training epochs (default: ${DEFAULT-VALUE})")
    int epochs = FitSettings.DEFAULT_EPOCHS;

    @Option(names = "--seed", paramLabel = "S", description = "seeds the initial factors; the held-out split always uses the same fixed seed (default: ${DEFAULT-VALUE})")
    long seed = FitSettings.DEFAULT_SEED;

    @Option(names = "--holdout", paramLabel = "F", description = "share of each user's ratings held out for evaluation (default: ${DEFAULT-VALUE})")
    double holdout = TrainSettings.DEFAULT_HOLDOUT;

    @Option(names = "--threads", paramLabel = "N", description = "worker threads; results do not depend on it (default: the number of processors)")
    int threads = Runtime.getRuntime().availableProcessors();

    @Option(names = "--coupling", paramLabel = "C", description = "how trust is used: shared or none (default: ${DEFAULT-VALUE})")
    String coupling = FitSettings.DEFAULT_COUPLING.label();

    @Option(names = "--relevance", paramLabel = "R", description = "a held-out rating at or above this counts as relevant (default: ${DEFAULT-VALUE})")
    float relevance = TrainSettings.defaults().relevance();

    @Option(names = "--k", paramLabel = "K", description = "list length for precision@k, recall@k, nDCG@k (default: ${DEFAULT-VALUE})")
    int k = TrainSettings.defaults().k();

    @Override
    public Integer call() {
        TrainSettings settings = settings();
        try (Database database = Database.open(DatabaseSettings.fromEnvironment(System.getenv()))) {
            TrainReport report = new TrainJob(database, settings).run();
            PrintWriter out = spec.commandLine().getOut();
            out.print(report.summary());
            out.flush();
        }
        return 0;
    }

    TrainSettings settings() {
        try {
            FitSettings fit = FitSettings.defaults().withRank(rank).withLambda(lambda).withTrust(trustWeight, trustAlpha)
                    .withEpochs(epochs).withSeed(seed).withThreads(threads).withCoupling(Coupling.parse(coupling));
            return TrainSettings.defaults().withFit(fit).withHoldout(holdout).withRanking(relevance, k);
        } catch (IllegalArgumentException e) {
            throw new ParameterException(spec.commandLine(), "train: " + e.getMessage());
        }
    }
}
