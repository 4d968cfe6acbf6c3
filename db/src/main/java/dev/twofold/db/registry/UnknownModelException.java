package dev.twofold.db.registry;

import dev.twofold.db.TwofoldException;

/** No model version has the given id. */
public final class UnknownModelException extends TwofoldException {
    private final long modelId;

    public UnknownModelException(long modelId) {
        super("there is no model " + modelId + "; 'twofold models list' shows the versions");
        this.modelId = modelId;
    }

    public long modelId() {
        return modelId;
    }

    @Override
    public int exitCode() {
        return EXIT_DATA_ERROR;
    }
}
