package dev.twofold.service;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.twofold.db.TwofoldException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.db.registry.UnknownModelException;
import java.io.IOException;
import java.io.PrintWriter;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Optional;
import java.util.concurrent.Callable;
import picocli.CommandLine;
import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Parameters;

/**
 * {@code twofold models list|show|promote|rollback}: the model registry from the command line. A
 * promotion or rollback commits and announces itself; every running service switches within
 * seconds.
 */
@Command(name = "models", mixinStandardHelpOptions = true,
        description = "List, show, promote and roll back model versions.",
        subcommands = {ModelsCommand.ListVersions.class, ModelsCommand.Show.class, ModelsCommand.Promote.class,
            ModelsCommand.Rollback.class})
public final class ModelsCommand implements Callable<Integer> {

    private static final ObjectMapper JSON = new ObjectMapper();

    @CommandLine.Spec
    CommandSpec spec;

    private final Map<String, String> environment;

    public ModelsCommand() {
        this(System.getenv());
    }

    /** With an explicit environment (the {@code TWOFOLD_DB_*} variables), for tests and embedding. */
    public ModelsCommand(Map<String, String> environment) {
        this.environment = environment;
    }

    /** Without a subcommand: says which exist, exit 2 (usage). */
    @Override
    public Integer call() {
        PrintWriter err = spec.commandLine().getErr();
        err.println("twofold models: give a subcommand: list, show, promote or rollback");
        spec.commandLine().usage(err);
        err.flush();
        return TwofoldException.EXIT_USAGE;
    }

    private Database open() {
        return Database.open(DatabaseSettings.fromEnvironment(environment));
    }

    @Command(name = "list", mixinStandardHelpOptions = true,
            description = "Every version, newest first: status, rank, coupling, held-out RMSE, when, and why.")
    static final class ListVersions implements Callable<Integer> {
        @CommandLine.ParentCommand
        ModelsCommand parent;

        @CommandLine.Spec
        CommandSpec spec;

        @Override
        public Integer call() {
            try (Database database = parent.open()) {
                ModelRegistry registry = new ModelRegistry(database);
                List<ModelHeader> all = registry.list();
                PrintWriter out = spec.commandLine().getOut();
                out.printf(Locale.ROOT, "%6s  %-9s  %4s  %-9s  %8s  %-20s  %s%n", "id", "status", "rank", "coupling",
                        "RMSE", "created", "reason");
                for (ModelHeader h : all) {
                    out.printf(Locale.ROOT, "%6d  %-9s  %4d  %-9s  %8s  %-20s  %s%n", h.id(), h.status(), h.rank(),
                            h.coupling(), rmse(h).map(r -> String.format(Locale.ROOT, "%.4f", r)).orElse("-"),
                            h.createdAt().toString().replaceAll("\\.\\d+Z$", "Z"), h.reason() == null ? "" : h.reason());
                }
                if (all.isEmpty()) {
                    out.println("no model versions yet; train one with: twofold train");
                }
                out.flush();
            }
            return 0;
        }
    }

    @Command(name = "show", mixinStandardHelpOptions = true,
            description = "One version with all its parameters, metrics and counts (JSON).")
    static final class Show implements Callable<Integer> {
        @CommandLine.ParentCommand
        ModelsCommand parent;

        @Parameters(paramLabel = "ID", description = "the model version id")
        long id;

        @CommandLine.Spec
        CommandSpec spec;

        @Override
        public Integer call() {
            try (Database database = parent.open()) {
                ModelHeader h = new ModelRegistry(database).find(id).orElseThrow(() -> new UnknownModelException(id));
                PrintWriter out = spec.commandLine().getOut();
                out.printf(Locale.ROOT, "model %d: %s, rank %d, coupling %s, lambda %s, trust weight %s, trust alpha %s,"
                        + " scale %s..%s, mean %s, %d users, %d items%n", h.id(), h.status(), h.rank(), h.coupling(),
                        h.lambda(), h.trustWeight(), h.trustAlpha(), h.scaleMin(), h.scaleMax(), h.globalMean(),
                        h.numUsers(), h.numItems());
                out.printf(Locale.ROOT, "created %s, finished %s%s%n", h.createdAt(),
                        h.finishedAt() == null ? "-" : h.finishedAt(), h.reason() == null ? "" : "; " + h.reason());
                out.println("params:  " + h.paramsJson());
                out.println("counts:  " + h.countsJson());
                out.println("metrics: " + h.metricsJson());
                out.flush();
            }
            return 0;
        }
    }

    @Command(name = "promote", mixinStandardHelpOptions = true,
            description = {"Make a version the active one; running services switch to it within seconds.",
                "Exit 65 when there is no such version or it is still training or failed."})
    static final class Promote implements Callable<Integer> {
        @CommandLine.ParentCommand
        ModelsCommand parent;

        @Parameters(paramLabel = "ID", description = "the model version id")
        long id;

        @CommandLine.Spec
        CommandSpec spec;

        @Override
        public Integer call() {
            try (Database database = parent.open()) {
                ModelRegistry registry = new ModelRegistry(database);
                registry.promote(id);
                spec.commandLine().getOut().printf(Locale.ROOT, "model %d is active%s%n", id,
                        registry.previous().map(p -> "; 'twofold models rollback' returns to model " + p).orElse(""));
                spec.commandLine().getOut().flush();
            }
            return 0;
        }
    }

    @Command(name = "rollback", mixinStandardHelpOptions = true,
            description = {"Re-activate the version that was active before the current one.",
                "Exit 65 when there is none."})
    static final class Rollback implements Callable<Integer> {
        @CommandLine.ParentCommand
        ModelsCommand parent;

        @CommandLine.Spec
        CommandSpec spec;

        @Override
        public Integer call() {
            try (Database database = parent.open()) {
                long now = new ModelRegistry(database).rollback();
                spec.commandLine().getOut().printf(Locale.ROOT, "model %d is active again%n", now);
                spec.commandLine().getOut().flush();
            }
            return 0;
        }
    }

    /** Held-out RMSE of the model from its metrics ({@code model.overall.rmse}), when evaluated. */
    static Optional<Double> rmse(ModelHeader h) {
        if (h.metricsJson() == null || h.metricsJson().isBlank()) {
            return Optional.empty();
        }
        try {
            JsonNode rmse = JSON.readTree(h.metricsJson()).path("model").path("overall").path("rmse");
            return rmse.isNumber() ? Optional.of(rmse.doubleValue()) : Optional.empty();
        } catch (IOException e) {
            return Optional.empty();
        }
    }
}
