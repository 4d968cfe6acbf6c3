package dev.twofold.service.model;

import dev.twofold.db.connect.Database;
import dev.twofold.db.registry.ModelFactors;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.db.snapshot.IdDirectory;
import dev.twofold.db.snapshot.Snapshot;
import dev.twofold.db.snapshot.SnapshotReader;
import java.util.Optional;

/**
 * Reads a model version from PostgreSQL into a {@link ServingModel}: its header and factors from
 * the registry, the ratings and trust edges as they are now (so rated items are never
 * recommended, including those rated after training, and users who joined since but trust
 * someone get a trust-built vector), then the id directory.
 *
 * <p>The snapshot is read before the directory on purpose: the directory only grows between the
 * two reads, so it names every index the snapshot uses (a user forgotten in between simply has no
 * id and is not served).
 */
public final class ModelLoader implements ModelSource {

    private final Database database;

    public ModelLoader(Database database) {
        this.database = database;
    }

    /** The active model version, loaded, or empty when none has been promoted yet. */
    public Optional<ServingModel> loadActive() {
        return active().map(this::load);
    }

    @Override
    public Optional<ModelHeader> active() {
        return new ModelRegistry(database).active();
    }

    /** The given model version, whatever its status. */
    @Override
    public ServingModel load(ModelHeader header) {
        ModelFactors factors = new ModelRegistry(database).loadFactors(header.id());
        Snapshot snapshot = new SnapshotReader(database).read();
        IdDirectory ids = IdDirectory.load(database);
        return ServingModel.assemble(header, factors, ids, snapshot.ratingUser(), snapshot.ratingItem(),
                snapshot.truster(), snapshot.trustee(), snapshot.trustWeight());
    }
}
