package dev.twofold.trainer;

import dev.twofold.db.TwofoldException;

/**
 * A trainer step failed for a reason other than bad input or an unreachable database (for example
 * a file that cannot be written, or a fit that produced no usable model). Exit code 1; the message
 * says what failed and what to check.
 */
public final class TrainerException extends TwofoldException {

    public TrainerException(String message) {
        super(message);
    }

    public TrainerException(String message, Throwable cause) {
        super(message, cause);
    }

    @Override
    public int exitCode() {
        return EXIT_SOFTWARE;
    }
}
