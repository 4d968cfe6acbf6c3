package dev.twofold.service;

import dev.twofold.db.TwofoldException;

/** A service setting has a value outside its range; the message names the setting, the value and the range. */
public final class SettingsException extends TwofoldException {

    public SettingsException(String message) {
        super(message);
    }

    @Override
    public int exitCode() {
        return EXIT_USAGE;
    }
}
