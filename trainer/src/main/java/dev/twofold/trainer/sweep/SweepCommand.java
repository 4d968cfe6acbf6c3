package dev.twofold.trainer.sweep;

import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import dev.twofold.db.progress.Progress;
import dev.twofold.db.snapshot.Snapshot;
import dev.twofold.db.snapshot.SnapshotReader;
import dev.twofold.trainer.TrainerException;
import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.SolverKind;
import dev.twofold.trainer.publish.HeldOutData;
import dev.twofold.trainer.publish.TrainSettings;
import dev.twofold.trainer.split.SplitMethod;
import java.io.IOException;
import java.io.PrintWriter;
import java.nio.charset.StandardCharsets;
import java.nio.file.AtomicMoveNotSupportedException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardCopyOption;
import java.util.Locale;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/**
 * {@code twofold sweep}: how validation RMSE and precision@k depend on rank and λ. The ratings are
 * split as {@code train} splits them (the held-out rows are never looked at), the training rows are
 * split again into fitting and validation rows, and every (rank, λ) is fitted with early stopping on
 * the validation rows. Prints a table and writes {@code sweep.csv} and {@code sweep.svg} to
 * {@code --out}.
 */
@Command(name = "sweep", mixinStandardHelpOptions = true,
        description = "Fit every rank x lambda on a validation split and report validation RMSE and precision@k as a table, a CSV file and an SVG plot.")
public final class SweepCommand implements Callable<Integer> {

    @Spec
    CommandSpec spec;

    @Option(names = "--ranks", split = ",", paramLabel = "K,...", description = "ranks to try (default: 4,8,16,32,64)")
    int[] ranks = {4, 8, 16, 32, 64};

    @Option(names = "--lambdas", split = ",", paramLabel = "L,...", description = "lambda values to try (default: 0.01,0.02,0.04,0.08,0.16)")
    float[] lambdas = {0.01f, 0.02f, 0.04f, 0.08f, 0.16f};

    @Option(names = "--out", required = true, paramLabel = "DIR", description = "directory for sweep.csv and sweep.svg (created if missing)")
    Path out;

    @Option(names = "--coupling", paramLabel = "C", description = "shared, neighbour or none (default: ${DEFAULT-VALUE})")
    String coupling = FitSettings.DEFAULT_COUPLING.label();

    @Option(names = "--trust-weight", paramLabel = "W", description = "tau for shared, beta for neighbour (default: the coupling's)")
    Float trustWeight;

    @Option(names = "--solver", paramLabel = "S", description = "als, ccd or greedy (default: ${DEFAULT-VALUE})")
    String solver = TrainSettings.DEFAULT_SOLVER.label();

    @Option(names = "--epochs", paramLabel = "N", description = "most epochs per setting (default: ${DEFAULT-VALUE})")
    int epochs = FitSettings.DEFAULT_EPOCHS;

    @Option(names = "--patience", paramLabel = "N", description = "stop a setting after N epochs without a better validation RMSE (default: ${DEFAULT-VALUE})")
    int patience = TrainSettings.DEFAULT_PATIENCE;

    @Option(names = "--split", paramLabel = "HOW", description = "user or time (default: ${DEFAULT-VALUE})")
    String split = TrainSettings.DEFAULT_SPLIT.label();

    @Option(names = "--holdout", paramLabel = "F", description = "share of each user's ratings held out, at each of the two cuts (default: ${DEFAULT-VALUE})")
    double holdout = TrainSettings.DEFAULT_HOLDOUT;

    @Option(names = "--threads", paramLabel = "N", description = "worker threads (default: the number of processors)")
    int threads = Runtime.getRuntime().availableProcessors();

    @Option(names = "--seed", paramLabel = "S", description = "seeds the initial factors (default: ${DEFAULT-VALUE})")
    long seed = FitSettings.DEFAULT_SEED;

    @Option(names = "--relevance", paramLabel = "R", description = "a validation rating at or above this is relevant (default: ${DEFAULT-VALUE})")
    float relevance = TrainSettings.defaults().relevance();

    @Option(names = "--k", paramLabel = "K", description = "list length of precision@k (default: ${DEFAULT-VALUE})")
    int k = TrainSettings.defaults().k();

    @Override
    public Integer call() {
        TrainSettings settings = settings();
        SweepResult result;
        try (Database database = Database.open(DatabaseSettings.fromEnvironment(System.getenv()))) {
            Snapshot snapshot = new SnapshotReader(database).read();
            if (snapshot.numRatings() == 0) {
                throw new TrainerException("there are no ratings to sweep on; import ratings first (twofold import)");
            }
            result = run(snapshot, settings, Progress.forConsole("sweep"));
        }
        PrintWriter stdout = spec.commandLine().getOut();
        stdout.print(result.table());
        stdout.println(result.why());
        try {
            Files.createDirectories(out);
            writeAtomically(out.resolve("sweep.csv"), result.csv());
            writeAtomically(out.resolve("sweep.svg"), result.svg());
        } catch (IOException e) {
            throw new TrainerException("could not write the sweep to " + out + ": " + e.getMessage()
                    + "; check that the directory is writable", e);
        }
        stdout.printf(Locale.ROOT, "wrote %s and %s%n", out.resolve("sweep.csv"), out.resolve("sweep.svg"));
        stdout.flush();
        return 0;
    }

    /** The sweep of a snapshot: train's split, then a validation split of its training rows. */
    public static SweepResult run(Snapshot snapshot, TrainSettings settings, Progress progress) {
        HeldOutData data = HeldOutData.of(snapshot, settings);
        HeldOutData.Validation v = data.validation(settings);
        if (v.rows().nnz() == 0) {
            throw new TrainerException("no ratings could be held out for validation (every user has a single training "
                    + "rating); a sweep needs more ratings per user");
        }
        return Sweep.run(Sweep.withValidation(v.fit(), v.rows(), settings.scale().min(), settings.scale().max()),
                v.rows(), settings.solver().create(), settings.fit().withPatience(settings.patience()),
                settings.sweepRanks(), settings.sweepLambdas(), settings.evaluation(), true, progress);
    }

    TrainSettings settings() {
        try {
            Coupling c = Coupling.parse(coupling);
            if (patience < 1) {
                throw new IllegalArgumentException("patience " + patience + " outside 1.." + TrainSettings.MAX_PATIENCE
                        + " (a sweep always stops early)");
            }
            FitSettings fit = FitSettings.defaults().withCoupling(c)
                    .withTrust(trustWeight == null ? c.defaultTrustWeight() : trustWeight, FitSettings.DEFAULT_TRUST_ALPHA)
                    .withEpochs(epochs).withSeed(seed).withThreads(threads);
            return TrainSettings.defaults().withFit(fit).withHoldout(holdout).withRanking(relevance, k)
                    .withSolver(SolverKind.parse(solver)).withSplit(SplitMethod.parse(split)).withPatience(patience)
                    .withSweep(ranks, lambdas);
        } catch (IllegalArgumentException e) {
            throw new ParameterException(spec.commandLine(), "sweep: " + e.getMessage());
        }
    }

    private static void writeAtomically(Path target, String text) throws IOException {
        Path tmp = Files.createTempFile(target.getParent(), target.getFileName().toString(), ".part");
        try {
            Files.writeString(tmp, text, StandardCharsets.UTF_8);
            try {
                Files.move(tmp, target, StandardCopyOption.REPLACE_EXISTING, StandardCopyOption.ATOMIC_MOVE);
            } catch (AtomicMoveNotSupportedException e) {
                Files.move(tmp, target, StandardCopyOption.REPLACE_EXISTING);
            }
        } finally {
            Files.deleteIfExists(tmp);
        }
    }
}
