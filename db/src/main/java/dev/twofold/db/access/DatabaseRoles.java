package dev.twofold.db.access;

import dev.twofold.db.BadInputException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.internal.SqlFailures;
import java.io.IOException;
import java.io.InputStream;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.sql.Connection;
import java.sql.SQLException;
import java.sql.Statement;
import java.util.regex.Pattern;

/**
 * The PostgreSQL roles of a least-privilege deployment: a service role that reads models and
 * writes ratings, trust and erasures, and a trainer role that reads ratings and trust and writes
 * model versions. The grants are the SQL resource {@value #RESOURCE} (documented there, line by
 * line), with the two role names filled in; applying it is idempotent and opt-in
 * ({@code twofold roles}). The embedded default does not use it: there one superuser runs
 * everything.
 */
public final class DatabaseRoles {

    public static final String DEFAULT_SERVICE_ROLE = "twofold_service";
    public static final String DEFAULT_TRAINER_ROLE = "twofold_trainer";
    static final String RESOURCE = "roles.sql";
    /** Plain lower-case identifiers only, so a name goes into the SQL without quoting and cannot change it. */
    private static final Pattern ROLE_NAME = Pattern.compile("[a-z_][a-z0-9_]{0,62}");

    private DatabaseRoles() {
    }

    /**
     * The grants as SQL for the given role names, for psql or a review.
     *
     * @throws BadInputException when a name is not a plain lower-case identifier or both are the same
     */
    public static String sql(String serviceRole, String trainerRole) {
        requireName("service role", serviceRole);
        requireName("trainer role", trainerRole);
        if (serviceRole.equals(trainerRole)) {
            throw new BadInputException("the service and trainer roles must differ; both are '" + serviceRole + "'");
        }
        return template().replace("${service_role}", serviceRole).replace("${trainer_role}", trainerRole);
    }

    /**
     * Creates the roles when missing and replaces their table privileges, in one transaction, as
     * the database's user (who must own Twofold's tables, and may create roles when one is missing).
     */
    public static void apply(Database database, String serviceRole, String trainerRole) {
        String sql = sql(serviceRole, trainerRole);
        try (Connection c = database.dataSource().getConnection()) {
            c.setAutoCommit(false);
            try (Statement s = c.createStatement()) {
                s.execute(sql);
                c.commit();
            } catch (SQLException | RuntimeException e) {
                c.rollback();
                throw e;
            }
        } catch (SQLException e) {
            throw SqlFailures.translate(e, "granting the roles " + serviceRole + " and " + trainerRole
                    + " (run it as the owner of Twofold's tables, with CREATEROLE when a role is missing)",
                    database.description());
        }
    }

    private static void requireName(String what, String name) {
        if (name == null || !ROLE_NAME.matcher(name).matches()) {
            throw new BadInputException("the " + what + " '" + name + "' is not a plain PostgreSQL role name: use 1..63"
                    + " lower-case letters, digits and underscores, not starting with a digit");
        }
    }

    private static String template() {
        try (InputStream in = DatabaseRoles.class.getResourceAsStream(RESOURCE)) {
            if (in == null) {
                throw new IllegalStateException(RESOURCE + " is missing from the jar next to " + DatabaseRoles.class.getName());
            }
            return new String(in.readAllBytes(), StandardCharsets.UTF_8);
        } catch (IOException e) {
            throw new UncheckedIOException("reading " + RESOURCE, e);
        }
    }
}
