package dev.twofold.db;

/** PostgreSQL could not be reached or refused us; the message says which database and what to check. */
public final class DatabaseUnavailableException extends TwofoldException {
    public DatabaseUnavailableException(String message, Throwable cause) {
        super(message, cause);
    }

    @Override
    public int exitCode() {
        return EXIT_UNAVAILABLE;
    }
}
