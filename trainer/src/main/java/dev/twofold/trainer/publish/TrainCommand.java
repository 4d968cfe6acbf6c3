package dev.twofold.trainer.publish;

import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.SolverKind;
import dev.twofold.trainer.progress.Progress;
import dev.twofold.trainer.split.SplitMethod;
import dev.twofold.trainer.sweep.Sweep;
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
 * Without {@code --rank} or {@code --lambda} it first sweeps them on a validation split of the
 * training ratings and says which it chose and why.
 */
@Command(name = "train", mixinStandardHelpOptions = true,
        description = "Fit a model on all ratings and trust edges, evaluate it on held-out ratings against baselines and the active model, store it, and promote it when it is at least as good.")
public final class TrainCommand implements Callable<Integer> {

    @Spec
    CommandSpec spec;

    @Option(names = "--rank", paramLabel = "K", description = "number of latent factors (default: chosen from 4, 8, 16 on a validation split)")
    Integer rank;

    @Option(names = "--lambda", paramLabel = "L", description = "regularisation per observation (default: chosen from 0.01, 0.02, 0.04 on a validation split)")
    Float lambda;

    @Option(names = "--coupling", paramLabel = "C", description = "how trust is used: shared (trust matrix factorised with the user factors), neighbour (user factors pulled towards those of trusted users) or none (default: ${DEFAULT-VALUE})")
    String coupling = FitSettings.DEFAULT_COUPLING.label();

    @Option(names = "--trust-weight", paramLabel = "W", description = "weight of the trust term: tau for shared, beta for neighbour (default: 0.3 for shared, 8 for neighbour)")
    Float trustWeight;

    @Option(names = "--trust-alpha", paramLabel = "A", description = "shared coupling: confidence of an observed trust edge, 1 + A * weight (default: ${DEFAULT-VALUE})")
    float trustAlpha = FitSettings.DEFAULT_TRUST_ALPHA;

    @Option(names = "--solver", paramLabel = "S", description = "als (alternating least squares), ccd (cyclic coordinate descent) or greedy (greedy coordinate descent) (default: ${DEFAULT-VALUE})")
    String solver = TrainSettings.DEFAULT_SOLVER.label();

    @Option(names = "--epochs", paramLabel = "N", description = "most training epochs (default: ${DEFAULT-VALUE})")
    int epochs = FitSettings.DEFAULT_EPOCHS;

    @Option(names = "--patience", paramLabel = "N", description = "stop after N epochs without a better validation RMSE and fit the model for the best epoch count; 0 runs every epoch (default: ${DEFAULT-VALUE})")
    int patience = TrainSettings.DEFAULT_PATIENCE;

    @Option(names = "--seed", paramLabel = "S", description = "seeds the initial factors; the held-out split always uses the same fixed seed (default: ${DEFAULT-VALUE})")
    long seed = FitSettings.DEFAULT_SEED;

    @Option(names = "--split", paramLabel = "HOW", description = "how held-out ratings are chosen: user (a share of each user's ratings) or time (each user's latest) (default: ${DEFAULT-VALUE})")
    String split = TrainSettings.DEFAULT_SPLIT.label();

    @Option(names = "--holdout", paramLabel = "F", description = "share of each user's ratings held out for evaluation (default: ${DEFAULT-VALUE})")
    double holdout = TrainSettings.DEFAULT_HOLDOUT;

    @Option(names = "--threads", paramLabel = "N", description = "worker threads; results do not depend on it (default: the number of processors)")
    int threads = Runtime.getRuntime().availableProcessors();

    @Option(names = "--relevance", paramLabel = "R", description = "a held-out rating at or above this counts as relevant (default: ${DEFAULT-VALUE})")
    float relevance = TrainSettings.defaults().relevance();

    @Option(names = "--k", paramLabel = "K", description = "list length for precision@k, recall@k, nDCG@k (default: ${DEFAULT-VALUE})")
    int k = TrainSettings.defaults().k();

    @Override
    public Integer call() {
        TrainSettings settings = settings();
        try (Database database = Database.open(DatabaseSettings.fromEnvironment(System.getenv()))) {
            TrainReport report = new TrainJob(database, settings, settings.solver().create(),
                    Progress.forConsole("train")).run();
            PrintWriter out = spec.commandLine().getOut();
            out.print(report.summary());
            out.flush();
        }
        return 0;
    }

    TrainSettings settings() {
        try {
            Coupling c = Coupling.parse(coupling);
            FitSettings fit = FitSettings.defaults().withRank(rank == null ? FitSettings.DEFAULT_RANK : rank)
                    .withLambda(lambda == null ? FitSettings.DEFAULT_LAMBDA : lambda)
                    .withTrust(trustWeight == null ? c.defaultTrustWeight() : trustWeight, trustAlpha)
                    .withEpochs(epochs).withSeed(seed).withThreads(threads).withCoupling(c);
            return TrainSettings.defaults().withFit(fit).withHoldout(holdout).withRanking(relevance, k)
                    .withSolver(SolverKind.parse(solver)).withSplit(SplitMethod.parse(split)).withPatience(patience)
                    .withSweep(rank == null ? Sweep.DEFAULT_RANKS : null, lambda == null ? Sweep.DEFAULT_LAMBDAS : null);
        } catch (IllegalArgumentException e) {
            throw new ParameterException(spec.commandLine(), "train: " + e.getMessage());
        }
    }
}
