package dev.twofold.trainer.publish;

import dev.twofold.db.TwofoldException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import dev.twofold.db.progress.Progress;
import dev.twofold.db.registry.Retention;
import dev.twofold.db.registry.RetrainLock;
import dev.twofold.db.registry.RetrainLockedException;
import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.SolverKind;
import dev.twofold.trainer.split.SplitMethod;
import dev.twofold.trainer.sweep.Sweep;
import java.io.PrintWriter;
import java.util.Map;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/**
 * {@code twofold train}: fits a model on everything in the database, judges it on held-out ratings
 * against the baselines and the live model, stores it and promotes it per {@code --promote}. Without
 * {@code --rank} or {@code --lambda} it first sweeps them on a validation split of the training
 * ratings and says which it chose and why. One retrain runs at a time (exit 75 when another holds
 * the lock). Exit 0 whenever the run finished, whatever it decided: the report (or {@code --json}'s
 * {@code outcome}) says promoted, candidate or rejected.
 */
@Command(name = "train", mixinStandardHelpOptions = true,
        description = {
            "Fit a model on all ratings and trust edges, evaluate it on held-out ratings against the baselines and the"
                    + " live model (on the same rows), store it, and promote it when it passes the quality gate.",
            "Gate (--promote auto): promoted only if RMSE <= live RMSE x (1 + --rmse-tolerance) and precision@k >= live"
                    + " precision@k x (1 - --precision-tolerance); otherwise stored as rejected with the reason.",
            "One retrain at a time: a second one exits 75 at once, naming the holder. A version left 'training' by a"
                    + " trainer that died is marked failed by the next run.",
            "Exit codes: 0 the run finished (promoted, kept as candidate, or rejected: see the report or --json's"
                    + " outcome), 2 usage, 65 bad data, 69 database unavailable, 75 another retrain is running, 1 other failure.",
            ""
        })
public final class TrainCommand implements Callable<Integer> {

    private final Map<String, String> environment;

    public TrainCommand() {
        this(System.getenv());
    }

    /** With an explicit environment (the {@code TWOFOLD_DB_*} and {@code TWOFOLD_KEEP_MODELS} variables), for tests. */
    public TrainCommand(Map<String, String> environment) {
        this.environment = environment;
    }

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

    @Option(names = "--bias-prior", paramLabel = "G", description = "every user and item bias is estimated as if it had G more ratings with nothing to explain, so one or two ratings do not set a user's leniency (default: ${DEFAULT-VALUE})")
    float biasPrior = FitSettings.DEFAULT_BIAS_PRIOR;

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

    @Option(names = "--promote", paramLabel = "POLICY", description = "auto: promote only when the quality gate passes,"
            + " else store as rejected; never: store as a candidate; always: promote whatever the gate says"
            + " (default: ${DEFAULT-VALUE})")
    String promote = PromotionPolicy.AUTO.label();

    @Option(names = "--rmse-tolerance", paramLabel = "F", description = "gate: held-out RMSE may be at most this fraction"
            + " above the live model's (default: ${DEFAULT-VALUE}, 0.5 percent)")
    double rmseTolerance = QualityGate.DEFAULT_RMSE_TOLERANCE;

    @Option(names = "--precision-tolerance", paramLabel = "F", description = "gate: precision@k may be at most this fraction"
            + " below the live model's (default: ${DEFAULT-VALUE}, 3 percent)")
    double precisionTolerance = QualityGate.DEFAULT_PRECISION_TOLERANCE;

    @Option(names = "--keep", paramLabel = "N", description = "after the run, keep the N newest model versions (always also"
            + " the active one and the one a rollback returns to) and delete older ones (default: $TWOFOLD_KEEP_MODELS, else "
            + Retention.DEFAULT_KEEP + ")")
    Integer keep;

    @Option(names = "--json", description = "print the report as one JSON document on standard output (logs stay on"
            + " standard error); a run that stops prints {\"outcome\": \"failed\" or \"locked\", ...}")
    boolean json;

    @Override
    public Integer call() {
        TrainSettings settings = settings();
        PublishSettings publish = publishSettings();
        PrintWriter out = spec.commandLine().getOut();
        TrainJob job = null;
        try (Database database = Database.open(DatabaseSettings.fromEnvironment(environment))) {
            job = new TrainJob(database, settings, publish, settings.solver().create(), Progress.forConsole("train"));
            TrainReport report = job.run();
            out.print(json ? report.toJson() + System.lineSeparator() : report.summary());
            out.flush();
        } catch (TwofoldException e) {
            if (json) {
                printFailure(out, e.exitCode(), e.getMessage(), job, e instanceof RetrainLockedException locked
                        ? locked.holder().orElse(null) : null);
            }
            throw e;
        } catch (RuntimeException e) {
            if (json) {
                printFailure(out, TwofoldException.EXIT_SOFTWARE, e.toString(), job, null);
            }
            throw e;
        }
        return 0;
    }

    private static void printFailure(PrintWriter out, int exitCode, String reason, TrainJob job, RetrainLock.Holder holder) {
        out.println(MetricsJson.failure(exitCode, reason, job == null ? null : job.modelId().orElse(null), holder));
        out.flush();
    }

    PublishSettings publishSettings() {
        try {
            Retention retention = keep == null ? Retention.fromEnvironment(environment) : new Retention(keep);
            return new PublishSettings(PromotionPolicy.parse(promote), new QualityGate(rmseTolerance, precisionTolerance),
                    retention);
        } catch (IllegalArgumentException e) {
            throw new ParameterException(spec.commandLine(), "train: " + e.getMessage());
        }
    }

    TrainSettings settings() {
        try {
            Coupling c = Coupling.parse(coupling);
            FitSettings fit = FitSettings.defaults().withRank(rank == null ? FitSettings.DEFAULT_RANK : rank)
                    .withLambda(lambda == null ? FitSettings.DEFAULT_LAMBDA : lambda)
                    .withTrust(trustWeight == null ? c.defaultTrustWeight() : trustWeight, trustAlpha)
                    .withEpochs(epochs).withSeed(seed).withThreads(threads).withCoupling(c).withBiasPrior(biasPrior);
            return TrainSettings.defaults().withFit(fit).withHoldout(holdout).withRanking(relevance, k)
                    .withSolver(SolverKind.parse(solver)).withSplit(SplitMethod.parse(split)).withPatience(patience)
                    .withSweep(rank == null ? Sweep.DEFAULT_RANKS : null, lambda == null ? Sweep.DEFAULT_LAMBDAS : null);
        } catch (IllegalArgumentException e) {
            throw new ParameterException(spec.commandLine(), "train: " + e.getMessage());
        }
    }
}
