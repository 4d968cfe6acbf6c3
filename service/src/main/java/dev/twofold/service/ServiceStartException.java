package dev.twofold.service;

import dev.twofold.db.TwofoldException;

/** The HTTP server could not start, typically because the address is in use or not local. */
public final class ServiceStartException extends TwofoldException {

    public ServiceStartException(String message, Throwable cause) {
        super(message, cause);
    }

    @Override
    public int exitCode() {
        return EXIT_SOFTWARE;
    }
}
