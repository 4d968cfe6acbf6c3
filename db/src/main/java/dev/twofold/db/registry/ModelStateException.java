package dev.twofold.db.registry;

import dev.twofold.db.TwofoldException;

/**
 * The model exists but its status does not allow the operation (promoting one that is still
 * training or has failed, storing factors after training finished, rolling back with nothing to
 * roll back to). Nothing was changed.
 */
public final class ModelStateException extends TwofoldException {
    public ModelStateException(String message) {
        super(message);
    }

    @Override
    public int exitCode() {
        return EXIT_DATA_ERROR;
    }
}
