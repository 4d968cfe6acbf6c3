package dev.twofold.db.access;

import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import java.io.PrintWriter;
import java.time.ZoneOffset;
import java.time.format.DateTimeFormatter;
import java.time.temporal.TemporalAccessor;
import java.util.Map;
import java.util.concurrent.Callable;
import picocli.CommandLine;
import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Parameters;

/** {@code twofold keys create|list|revoke}: the API keys product backends and operators use. */
@Command(name = "keys", mixinStandardHelpOptions = true,
        description = "Create, list and revoke API keys (roles: read, write, admin).",
        subcommands = {KeysCommand.Create.class, KeysCommand.ListKeys.class, KeysCommand.Revoke.class})
public final class KeysCommand implements Callable<Integer> {

    static final DateTimeFormatter TIME = DateTimeFormatter.ofPattern("yyyy-MM-dd HH:mm:ss'Z'").withZone(ZoneOffset.UTC);

    @CommandLine.Spec
    CommandSpec spec;

    private final Map<String, String> environment;

    public KeysCommand() {
        this(System.getenv());
    }

    /** With an explicit environment (the {@code TWOFOLD_DB_*} variables), for tests and embedding. */
    public KeysCommand(Map<String, String> environment) {
        this.environment = environment;
    }

    @Override
    public Integer call() {
        throw new CommandLine.ParameterException(spec.commandLine(), "keys: give a subcommand: create, list or revoke");
    }

    Database open() {
        return Database.open(DatabaseSettings.fromEnvironment(environment));
    }

    @Command(name = "create", mixinStandardHelpOptions = true,
            description = "Create a key and print it once; only its hash is stored.")
    static final class Create implements Callable<Integer> {
        @CommandLine.ParentCommand
        KeysCommand parent;

        @Option(names = "--role", required = true, paramLabel = "ROLE", description = "read, write or admin")
        String role;

        @Option(names = "--name", required = true, paramLabel = "NAME", description = "who or what uses the key (1..64 characters)")
        String name;

        @CommandLine.Spec
        CommandSpec spec;

        @Override
        public Integer call() {
            KeyRole parsed;
            try {
                parsed = KeyRole.parse(role);
            } catch (IllegalArgumentException e) {
                throw new CommandLine.ParameterException(spec.commandLine(), "--role: " + e.getMessage());
            }
            try (Database database = parent.open()) {
                ApiKeys.Created created = new ApiKeys(database).create(name, parsed);
                PrintWriter out = spec.commandLine().getOut();
                out.println(created.key());
                out.flush();
                PrintWriter err = spec.commandLine().getErr();
                err.println("created " + parsed.label() + " key '" + name + "'; it is shown only this once: store it now");
                err.flush();
            }
            return 0;
        }
    }

    @Command(name = "list", mixinStandardHelpOptions = true, description = "List keys: name, role, created, last used, revoked.")
    static final class ListKeys implements Callable<Integer> {
        @CommandLine.ParentCommand
        KeysCommand parent;

        @CommandLine.Spec
        CommandSpec spec;

        @Override
        public Integer call() {
            try (Database database = parent.open()) {
                PrintWriter out = spec.commandLine().getOut();
                out.printf("%-24s %-6s %-12s %-20s %-20s %s%n", "NAME", "ROLE", "KEY", "CREATED", "LAST USED", "REVOKED");
                for (ApiKey k : new ApiKeys(database).list()) {
                    out.printf("%-24s %-6s %-12s %-20s %-20s %s%n", k.name(), k.role().label(), k.shown() + "…",
                            time(k.createdAt()), time(k.lastUsedAt()), time(k.revokedAt()));
                }
                out.flush();
            }
            return 0;
        }
    }

    @Command(name = "revoke", mixinStandardHelpOptions = true,
            description = "Revoke the live key with this name; running services stop accepting it at once.")
    static final class Revoke implements Callable<Integer> {
        @CommandLine.ParentCommand
        KeysCommand parent;

        @Parameters(paramLabel = "NAME", description = "the key's name")
        String name;

        @CommandLine.Spec
        CommandSpec spec;

        @Override
        public Integer call() {
            try (Database database = parent.open()) {
                if (!new ApiKeys(database).revoke(name)) {
                    throw new dev.twofold.db.BadInputException("no live key is named '" + name + "'; see `twofold keys list`");
                }
                spec.commandLine().getOut().println("revoked key '" + name + "'");
                spec.commandLine().getOut().flush();
            }
            return 0;
        }
    }

    private static String time(TemporalAccessor t) {
        return t == null ? "-" : TIME.format(t);
    }
}
