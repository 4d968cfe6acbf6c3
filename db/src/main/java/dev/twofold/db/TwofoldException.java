package dev.twofold.db;

/**
 * Root of Twofold's unchecked exceptions. Each one knows the process exit code the launcher
 * returns for it (see the contract: 0 ok, 2 usage, 65 bad input, 69 database unavailable,
 * 75 retrain lock held, 1 anything else), so the command line maps errors in one place.
 */
public abstract class TwofoldException extends RuntimeException {
    public static final int EXIT_SOFTWARE = 1;
    public static final int EXIT_USAGE = 2;
    public static final int EXIT_DATA_ERROR = 65;
    public static final int EXIT_UNAVAILABLE = 69;
    public static final int EXIT_LOCKED = 75;

    protected TwofoldException(String message) {
        super(message);
    }

    protected TwofoldException(String message, Throwable cause) {
        super(message, cause);
    }

    /** The process exit code a command returns when it stops on this exception. */
    public abstract int exitCode();
}
