package dev.twofold.db.ingest;

import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import java.util.Map;
import java.util.concurrent.Callable;
import picocli.CommandLine;
import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Parameters;

/** {@code twofold users forget USER}: erase one user's personal data everywhere Twofold keeps it. */
@Command(name = "users", mixinStandardHelpOptions = true,
        description = "Act on one user's stored data.",
        subcommands = UsersCommand.Forget.class)
public final class UsersCommand implements Callable<Integer> {

    @CommandLine.Spec
    CommandSpec spec;

    private final Map<String, String> environment;

    public UsersCommand() {
        this(System.getenv());
    }

    /** With an explicit environment (the {@code TWOFOLD_DB_*} variables), for tests and embedding. */
    public UsersCommand(Map<String, String> environment) {
        this.environment = environment;
    }

    @Override
    public Integer call() {
        throw new CommandLine.ParameterException(spec.commandLine(), "users: give a subcommand: forget");
    }

    @Command(name = "forget", mixinStandardHelpOptions = true,
            description = {
                "Erase a user: their ratings, trust edges in both directions, their factors in every stored model"
                        + " version and their id, in one transaction. Running services drop the user from memory;"
                        + " afterwards the user is served as unknown.",
                "Exit 0 when erased, 65 when no user has this id."
            })
    static final class Forget implements Callable<Integer> {
        @CommandLine.ParentCommand
        UsersCommand parent;

        @Parameters(paramLabel = "USER", description = "the user's id as the product knows it")
        String user;

        @CommandLine.Spec
        CommandSpec spec;

        @Override
        public Integer call() {
            try (Database database = Database.open(DatabaseSettings.fromEnvironment(parent.environment))) {
                if (!new RatingWriter(database, RatingScale.DEFAULT).forgetUser(user)) {
                    throw new dev.twofold.db.BadInputException("no user has the id '" + user + "'; nothing was erased");
                }
            }
            spec.commandLine().getOut().println("erased user '" + user + "'");
            spec.commandLine().getOut().flush();
            return 0;
        }
    }
}
