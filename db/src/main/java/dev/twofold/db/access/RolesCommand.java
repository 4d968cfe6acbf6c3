package dev.twofold.db.access;

import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import java.io.PrintWriter;
import java.util.Map;
import java.util.concurrent.Callable;
import picocli.CommandLine;
import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;

/** {@code twofold roles}: create or refresh the least-privilege database roles (opt-in). */
@Command(name = "roles", mixinStandardHelpOptions = true,
        description = {
            "Create (when missing) the database roles of a least-privilege deployment and set their privileges:"
                    + " a service role that reads models and writes ratings, trust and erasures, and a trainer role"
                    + " that reads ratings and trust and writes model versions. Run it as the owner of Twofold's"
                    + " tables; running it again is harmless. The roles get no login: give them one with"
                    + " ALTER ROLE ... LOGIN PASSWORD, then run `twofold serve` and `twofold train` as them"
                    + " (TWOFOLD_DB_USER, TWOFOLD_DB_PASSWORD). docs/operations.md, \"Database roles\", has the steps.",
            "Exit 0 when done, 65 for an unusable role name, 69 when the database cannot be reached."
        })
public final class RolesCommand implements Callable<Integer> {

    @Option(names = "--service-role", paramLabel = "NAME", defaultValue = DatabaseRoles.DEFAULT_SERVICE_ROLE,
            description = "the service's role (default ${DEFAULT-VALUE})")
    String serviceRole;

    @Option(names = "--trainer-role", paramLabel = "NAME", defaultValue = DatabaseRoles.DEFAULT_TRAINER_ROLE,
            description = "the trainer's role (default ${DEFAULT-VALUE})")
    String trainerRole;

    @Option(names = "--print", description = "print the SQL instead of running it (for psql or a review)")
    boolean print;

    @CommandLine.Spec
    CommandSpec spec;

    private final Map<String, String> environment;

    public RolesCommand() {
        this(System.getenv());
    }

    /** With an explicit environment (the {@code TWOFOLD_DB_*} variables), for tests and embedding. */
    public RolesCommand(Map<String, String> environment) {
        this.environment = environment;
    }

    @Override
    public Integer call() {
        PrintWriter out = spec.commandLine().getOut();
        if (print) {
            out.print(DatabaseRoles.sql(serviceRole, trainerRole));
            out.flush();
            return 0;
        }
        DatabaseRoles.sql(serviceRole, trainerRole); // checks the names before connecting
        try (Database database = Database.open(DatabaseSettings.fromEnvironment(environment))) {
            DatabaseRoles.apply(database, serviceRole, trainerRole);
            out.println("roles " + serviceRole + " (service) and " + trainerRole + " (trainer) are set on "
                    + database.description());
            out.println("give each a login if it has none: ALTER ROLE " + serviceRole + " LOGIN PASSWORD '...';"
                    + " then set TWOFOLD_DB_USER and TWOFOLD_DB_PASSWORD for twofold serve and twofold train");
            out.flush();
        }
        return 0;
    }
}
