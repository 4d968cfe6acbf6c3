package dev.twofold.db.internal;

import dev.twofold.db.DatabaseFailureException;
import dev.twofold.db.DatabaseUnavailableException;
import dev.twofold.db.TwofoldException;
import java.sql.SQLException;
import java.sql.SQLNonTransientConnectionException;
import java.sql.SQLTransientConnectionException;

/** Turns a JDBC failure into Twofold's exception family: unreachable server (69) or anything else (1). */
public final class SqlFailures {

    /** SQLSTATE of a statement the user has no privilege for (PostgreSQL manual, Appendix A). */
    public static final String INSUFFICIENT_PRIVILEGE = "42501";

    private SqlFailures() {
    }

    /**
     * @param e     what JDBC threw
     * @param doing what Twofold was doing, for the message ("reading the snapshot")
     * @param where {@link dev.twofold.db.connect.Database#description()} of the database
     */
    public static TwofoldException translate(SQLException e, String doing, String where) {
        if (isConnectionFailure(e)) {
            return new DatabaseUnavailableException("lost or could not get a connection to " + where + " while " + doing
                    + ": " + e.getMessage() + "; check that PostgreSQL is running and reachable", e);
        }
        if (INSUFFICIENT_PRIVILEGE.equals(e.getSQLState())) {
            return new DatabaseFailureException(doing + " failed on " + where + ": " + e.getMessage()
                    + "; the database user may not do this (see \"Database roles\" in docs/operations.md: the service"
                    + " and the trainer each have their own role, and only the tables' owner imports and migrates)", e);
        }
        return new DatabaseFailureException(doing + " failed on " + where + ": " + e.getMessage(), e);
    }

    /** Connection-class SQLSTATEs (08), server shutting down (57P0x), too many connections, pool time-outs. */
    public static boolean isConnectionFailure(SQLException e) {
        for (Throwable t = e; t != null; t = t.getCause()) {
            if (t instanceof SQLTransientConnectionException || t instanceof SQLNonTransientConnectionException) {
                return true;
            }
            if (t instanceof SQLException s && s.getSQLState() != null) {
                String state = s.getSQLState();
                if (state.startsWith("08") || state.startsWith("57P0") || state.equals("53300")) {
                    return true;
                }
            }
        }
        return false;
    }
}
