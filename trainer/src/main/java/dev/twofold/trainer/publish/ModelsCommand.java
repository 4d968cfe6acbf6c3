package dev.twofold.trainer.publish;

import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.db.registry.Retention;
import dev.twofold.db.registry.UnknownModelException;
import java.io.PrintWriter;
import java.time.Duration;
import java.time.ZoneOffset;
import java.time.format.DateTimeFormatter;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Optional;
import java.util.concurrent.Callable;
import java.util.function.Function;
import picocli.CommandLine;
import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Parameters;
import picocli.CommandLine.ParentCommand;
import picocli.CommandLine.Spec;

/**
 * {@code twofold models list | show ID | promote ID | rollback | prune}: the model registry for a
 * person (a table) or a pipeline ({@code --json}, the same objects as the HTTP admin routes
 * {@code GET /v1/models}, {@code GET /v1/models/{id}}). Promotion and rollback are the registry's
 * ({@link ModelRegistry#promote}, {@link ModelRegistry#rollback}): one transaction that moves the
 * active pointer and notifies running services, which switch to the new model.
 */
@Command(name = "models", mixinStandardHelpOptions = true,
        description = {
            "List, show, promote and roll back model versions.",
            "Statuses: training -> candidate -> active | rejected | failed; retired for a model that was active before.",
            "Exit codes: 0 ok, 2 usage, 65 no such model or a status that does not allow it, 69 database unavailable, 1 other."
        },
        subcommands = {
            ModelsCommand.ListModels.class,
            ModelsCommand.ShowModel.class,
            ModelsCommand.PromoteModel.class,
            ModelsCommand.Rollback.class,
            ModelsCommand.Prune.class,
        })
public final class ModelsCommand implements Callable<Integer> {

    private static final ObjectMapper JSON = new ObjectMapper();
    private static final DateTimeFormatter MINUTE = DateTimeFormatter.ofPattern("yyyy-MM-dd HH:mm'Z'", Locale.ROOT)
            .withZone(ZoneOffset.UTC);
    private static final int REASON_CHARS_IN_LIST = 60;

    @Spec
    CommandSpec spec;

    private final Map<String, String> environment;

    public ModelsCommand() {
        this(System.getenv());
    }

    /** With an explicit environment (the {@code TWOFOLD_DB_*} variables), for tests. */
    public ModelsCommand(Map<String, String> environment) {
        this.environment = environment;
    }

    @Override
    public Integer call() {
        throw new CommandLine.ParameterException(spec.commandLine(), "models: say what to do: list, show ID, promote ID,"
                + " rollback or prune");
    }

    <T> T withRegistry(Function<ModelRegistry, T> work) {
        try (Database database = Database.open(DatabaseSettings.fromEnvironment(environment))) {
            return work.apply(new ModelRegistry(database));
        }
    }

    @Command(name = "list", mixinStandardHelpOptions = true, description = "All versions, newest first, with held-out"
            + " RMSE and precision@k; marks the live one and the one a rollback returns to.")
    static final class ListModels implements Callable<Integer> {
        @ParentCommand
        ModelsCommand parent;
        @Spec
        CommandSpec spec;
        @Option(names = "--json", description = "one JSON document: {active, previous, models: [...]}")
        boolean json;

        @Override
        public Integer call() {
            Listing listing = parent.withRegistry(r -> new Listing(r.list(), r.active().map(ModelHeader::id), r.previous()));
            PrintWriter out = spec.commandLine().getOut();
            if (json) {
                ObjectNode root = pointer(listing.active, listing.previous);
                ArrayNode models = root.putArray("models");
                listing.models.forEach(h -> models.add(model(h)));
                out.println(write(root));
            } else if (listing.models.isEmpty()) {
                out.println("no model versions yet; 'twofold train' makes one");
            } else {
                out.print(table(listing));
            }
            out.flush();
            return 0;
        }
    }

    @Command(name = "show", mixinStandardHelpOptions = true, description = "One version: parameters, data counts, its"
            + " held-out figures beside the model that was live then and the baselines, and the reason for its status.")
    static final class ShowModel implements Callable<Integer> {
        @ParentCommand
        ModelsCommand parent;
        @Spec
        CommandSpec spec;
        @Parameters(paramLabel = "ID", description = "model version id")
        long id;
        @Option(names = "--json", description = "the version as one JSON object")
        boolean json;

        @Override
        public Integer call() {
            ModelHeader h = parent.withRegistry(r -> r.find(id).orElseThrow(() -> new UnknownModelException(id)));
            PrintWriter out = spec.commandLine().getOut();
            out.print(json ? write(model(h)) + System.lineSeparator() : details(h));
            out.flush();
            return 0;
        }
    }

    @Command(name = "promote", mixinStandardHelpOptions = true, description = "Make a version live (a candidate,"
            + " a rejected one, or a retired one). Running services switch to it; 'twofold models rollback' undoes it.")
    static final class PromoteModel implements Callable<Integer> {
        @ParentCommand
        ModelsCommand parent;
        @Spec
        CommandSpec spec;
        @Parameters(paramLabel = "ID", description = "model version id")
        long id;
        @Option(names = "--json", description = "print {active, previous} as JSON")
        boolean json;

        @Override
        public Integer call() {
            Moved moved = parent.withRegistry(r -> {
                ModelHeader before = r.find(id).orElseThrow(() -> new UnknownModelException(id));
                Optional<Long> was = r.active().map(ModelHeader::id);
                r.promote(id);
                return new Moved(before, was, r.active().map(ModelHeader::id), r.previous());
            });
            PrintWriter out = spec.commandLine().getOut();
            if (json) {
                out.println(write(pointer(moved.active, moved.previous)));
            } else if (moved.was.equals(Optional.of(id))) {
                out.printf(Locale.ROOT, "model %d was already active; nothing changed%n", id);
            } else {
                out.printf(Locale.ROOT, "model %d is now active%s%n", id, moved.was.map(w -> " (model " + w
                        + " retired; 'twofold models rollback' returns to it)").orElse(""));
                if (ModelRegistry.REJECTED.equals(moved.before.status())) {
                    out.printf(Locale.ROOT, "note: it had been rejected: %s%n", moved.before.reason());
                }
            }
            out.flush();
            return 0;
        }
    }

    @Command(name = "rollback", mixinStandardHelpOptions = true, description = "Make the previously active version"
            + " live again (the current one is retired). Rolling back twice returns to where it started.")
    static final class Rollback implements Callable<Integer> {
        @ParentCommand
        ModelsCommand parent;
        @Spec
        CommandSpec spec;
        @Option(names = "--json", description = "print {active, previous} as JSON")
        boolean json;

        @Override
        public Integer call() {
            Moved moved = parent.withRegistry(r -> {
                Optional<Long> was = r.active().map(ModelHeader::id);
                long now = r.rollback();
                return new Moved(r.find(now).orElseThrow(), was, Optional.of(now), r.previous());
            });
            PrintWriter out = spec.commandLine().getOut();
            if (json) {
                out.println(write(pointer(moved.active, moved.previous)));
            } else {
                out.printf(Locale.ROOT, "model %d is active again (model %d retired; rolling back again returns to it)%n",
                        moved.active.orElseThrow(), moved.was.orElseThrow());
            }
            out.flush();
            return 0;
        }
    }

    @Command(name = "prune", mixinStandardHelpOptions = true, description = "Apply retention now (every train does it"
            + " after its run): keep the N newest versions, the active one and the one a rollback returns to.")
    static final class Prune implements Callable<Integer> {
        @ParentCommand
        ModelsCommand parent;
        @Spec
        CommandSpec spec;
        @Option(names = "--keep", paramLabel = "N", description = "versions to keep (default: $TWOFOLD_KEEP_MODELS, else "
                + Retention.DEFAULT_KEEP + ")")
        Integer keep;
        @Option(names = "--json", description = "print {deleted: [...]} as JSON")
        boolean json;

        @Override
        public Integer call() {
            Retention retention;
            try {
                retention = keep == null ? Retention.fromEnvironment(parent.environment) : new Retention(keep);
            } catch (IllegalArgumentException e) {
                throw new CommandLine.ParameterException(spec.commandLine(), "models prune: " + e.getMessage());
            }
            List<Long> deleted = parent.withRegistry(r -> r.retain(retention.keep()));
            PrintWriter out = spec.commandLine().getOut();
            if (json) {
                ObjectNode root = JSON.createObjectNode();
                deleted.forEach(root.putArray("deleted")::add);
                out.println(write(root));
            } else {
                out.println(deleted.isEmpty() ? "nothing to delete" : "deleted model" + (deleted.size() == 1 ? " " : "s ")
                        + String.join(", ", deleted.stream().map(String::valueOf).toList()));
            }
            out.flush();
            return 0;
        }
    }

    private record Listing(List<ModelHeader> models, Optional<Long> active, Optional<Long> previous) {
    }

    private record Moved(ModelHeader before, Optional<Long> was, Optional<Long> active, Optional<Long> previous) {
    }

    // ---- text ---------------------------------------------------------------------------------------

    static String table(Listing listing) {
        StringBuilder s = new StringBuilder();
        String format = "%6s  %-9s  %-17s  %4s  %-9s  %8s  %9s  %-15s  %s%n";
        s.append(String.format(Locale.ROOT, format, "ID", "STATUS", "CREATED", "RANK", "COUPLING", "RMSE", "PREC@K",
                "POINTER", "REASON"));
        for (ModelHeader h : listing.models) {
            JsonNode metrics = parse(h.metricsJson());
            String pointer = listing.active.equals(Optional.of(h.id())) ? "live"
                    : listing.previous.equals(Optional.of(h.id())) ? "rollback target" : "";
            String k = metrics.path("k").isNumber() ? "@" + metrics.path("k").asInt() : "";
            String precision = number(metrics.at("/model/overall/precision"));
            s.append(String.format(Locale.ROOT, format, h.id(), h.status(), MINUTE.format(h.createdAt()), h.rank(),
                    h.coupling(), number(metrics.at("/model/overall/rmse")), precision.equals("-") ? "-" : precision + k,
                    pointer, clip(h.reason() == null ? "" : h.reason(), REASON_CHARS_IN_LIST)));
        }
        return s.toString();
    }

    static String details(ModelHeader h) {
        StringBuilder s = new StringBuilder();
        s.append(String.format(Locale.ROOT, "model %d: %s%n", h.id(), h.status()));
        s.append("created ").append(MINUTE.format(h.createdAt()));
        if (h.finishedAt() != null) {
            Duration took = Duration.between(h.createdAt(), h.finishedAt());
            s.append(String.format(Locale.ROOT, ", finished %s (%.1f s later)", MINUTE.format(h.finishedAt()),
                    took.toMillis() / 1000.0));
        }
        s.append(System.lineSeparator());
        if (h.reason() != null) {
            s.append("reason: ").append(h.reason()).append(System.lineSeparator());
        }
        s.append(String.format(Locale.ROOT, "rank %d, coupling %s, lambda %s, trust weight %s, trust alpha %s, scale %s..%s;"
                + " %,d users, %,d items%n", h.rank(), h.coupling(), h.lambda(), h.trustWeight(), h.trustAlpha(),
                h.scaleMin(), h.scaleMax(), h.numUsers(), h.numItems()));
        JsonNode counts = parse(h.countsJson());
        if (counts.size() > 0) {
            s.append("data: ").append(pairs(counts)).append(System.lineSeparator());
        }
        JsonNode params = parse(h.paramsJson());
        if (params.size() > 0) {
            s.append("parameters: ").append(pairs(params)).append(System.lineSeparator());
        }
        JsonNode m = parse(h.metricsJson());
        if (m.has("model")) {
            String k = m.path("k").asText("k");
            s.append(String.format(Locale.ROOT, "%-22s %8s %8s %9s %9s %9s %9s %9s%n", "held-out", "RMSE", "MAE",
                    "prec@" + k, "recall@" + k, "nDCG@" + k, "coverage", "cold RMSE"));
            row(s, "this model", m.path("model"));
            JsonNode liveId = m.at("/comparison/activeModelId");
            if (m.path("live").isObject()) {
                row(s, "live then (" + liveId.asText() + ")", m.path("live"));
            }
            row(s, "without trust", m.at("/baselines/withoutTrust"));
            row(s, "biases only", m.at("/baselines/biasesOnly"));
            row(s, "global mean", m.at("/baselines/globalMean"));
            row(s, "most popular", m.at("/baselines/mostPopular"));
        }
        return s.toString();
    }

    private static void row(StringBuilder s, String name, JsonNode segments) {
        if (!segments.isObject()) {
            return;
        }
        JsonNode o = segments.path("overall");
        s.append(String.format(Locale.ROOT, "%-22s %8s %8s %9s %9s %9s %9s %9s%n", name, number(o.path("rmse")),
                number(o.path("mae")), number(o.path("precision")), number(o.path("recall")), number(o.path("ndcg")),
                number(o.path("coverage")), number(segments.at("/cold/rmse"))));
    }

    private static String pairs(JsonNode object) {
        StringBuilder s = new StringBuilder();
        object.fields().forEachRemaining(e -> s.append(s.length() == 0 ? "" : ", ").append(e.getKey()).append(' ')
                .append(e.getValue().isTextual() ? e.getValue().asText() : e.getValue().toString()));
        return s.toString();
    }

    private static String number(JsonNode n) {
        return n.isNumber() ? String.format(Locale.ROOT, "%.4f", n.asDouble()) : "-";
    }

    private static String clip(String text, int max) {
        return text.length() <= max ? text : text.substring(0, max - 1) + "…";
    }

    // ---- JSON (the shapes of the HTTP admin routes) ----------------------------------------------------

    static ObjectNode pointer(Optional<Long> active, Optional<Long> previous) {
        ObjectNode root = JSON.createObjectNode();
        if (active.isPresent()) {
            root.put("active", active.get());
        } else {
            root.putNull("active");
        }
        if (previous.isPresent()) {
            root.put("previous", previous.get());
        } else {
            root.putNull("previous");
        }
        return root;
    }

    static ObjectNode model(ModelHeader h) {
        ObjectNode node = JSON.createObjectNode();
        node.put("id", h.id());
        node.put("status", h.status());
        node.put("rank", h.rank());
        node.put("coupling", h.coupling());
        node.put("lambda", h.lambda());
        node.put("trustWeight", h.trustWeight());
        node.put("trustAlpha", h.trustAlpha());
        node.put("scaleMin", h.scaleMin());
        node.put("scaleMax", h.scaleMax());
        node.put("globalMean", h.globalMean());
        node.put("users", h.numUsers());
        node.put("items", h.numItems());
        node.put("createdAt", h.createdAt().toString());
        node.put("finishedAt", h.finishedAt() == null ? null : h.finishedAt().toString());
        node.set("params", parse(h.paramsJson()));
        node.set("metrics", parse(h.metricsJson()));
        node.set("counts", parse(h.countsJson()));
        node.put("reason", h.reason());
        return node;
    }

    private static JsonNode parse(String json) {
        if (json == null || json.isBlank()) {
            return JSON.createObjectNode();
        }
        try {
            return JSON.readTree(json);
        } catch (JsonProcessingException e) {
            return JSON.createObjectNode();
        }
    }

    private static String write(JsonNode node) {
        try {
            return JSON.writeValueAsString(node);
        } catch (JsonProcessingException e) {
            throw new IllegalStateException("could not write JSON: " + e.getMessage(), e);
        }
    }
}
