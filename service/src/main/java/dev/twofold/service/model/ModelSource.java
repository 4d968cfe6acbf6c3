package dev.twofold.service.model;

import dev.twofold.db.registry.ModelHeader;
import java.util.Optional;

/** Where a service finds the model it should serve, and loads it. */
public interface ModelSource {

    /** The active version's header (cheap: one row), or empty when none is promoted. */
    Optional<ModelHeader> active();

    /** Loads a version for serving (reads its factors and the current ratings; can take seconds). */
    ServingModel load(ModelHeader header);
}
