package dev.twofold.service.http;

import dev.twofold.db.registry.ModelHeader;
import java.util.List;
import java.util.Optional;

/**
 * The model registry as the admin routes use it: list and read versions, move the active pointer.
 * Promotion and rollback take effect in the database at once; every running service (this one
 * included) switches when it hears of it.
 */
public interface ModelControl {

    /** All versions, newest first. */
    List<ModelHeader> list();

    Optional<ModelHeader> find(long modelId);

    /** The active version's id and the one a rollback returns to. */
    Pointer pointer();

    /**
     * Makes the version active.
     *
     * @throws dev.twofold.db.registry.UnknownModelException when there is no such version
     * @throws dev.twofold.db.registry.ModelStateException when it is training or failed
     */
    Pointer promote(long modelId);

    /**
     * Re-activates the version that was active before the current one.
     *
     * @throws dev.twofold.db.registry.ModelStateException when there is none
     */
    Pointer rollback();

    /**
     * Where the active pointer stands.
     *
     * @param active   the active version, if any
     * @param previous what a rollback returns to, if any
     */
    record Pointer(Optional<Long> active, Optional<Long> previous) {
    }
}
