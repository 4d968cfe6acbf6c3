package dev.twofold.db;

/**
 * A setting (environment variable or option) has a value Twofold cannot use. The message names the
 * setting, the value (never a secret) and what is allowed. Exit code 2, like any usage error.
 */
public final class ConfigurationException extends TwofoldException {
    public ConfigurationException(String message) {
        super(message);
    }

    @Override
    public int exitCode() {
        return EXIT_USAGE;
    }
}
