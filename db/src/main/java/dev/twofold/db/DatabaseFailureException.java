package dev.twofold.db;

/**
 * A database statement failed for a reason other than reachability or bad input: a schema that
 * does not match this build, a constraint the code should have prevented, a server error. The
 * message says what Twofold was doing; the cause carries PostgreSQL's own error.
 */
public final class DatabaseFailureException extends TwofoldException {
    public DatabaseFailureException(String message, Throwable cause) {
        super(message, cause);
    }

    public DatabaseFailureException(String message) {
        super(message);
    }

    @Override
    public int exitCode() {
        return EXIT_SOFTWARE;
    }
}
