package dev.twofold.db.registry;

import dev.twofold.db.connect.Database;
import java.util.List;
import java.util.Optional;

/**
 * The versioned models in PostgreSQL: headers, factors (binary float32 rows) and the pointer to the
 * active model. Promotion moves the pointer in one transaction, so readers see the old or the new
 * model, never a mix.
 */
public final class ModelRegistry {

    public ModelRegistry(Database database) {
    }

    /** Inserts a new version with status {@code training} from the draft's fields (its id and status are ignored); returns its id. */
    public long create(ModelHeader draft) {
        throw new UnsupportedOperationException("db helper implements this");
    }

    /** Writes the factors of a version that is still {@code training}, with binary COPY. */
    public void storeFactors(long modelId, ModelFactors factors) {
        throw new UnsupportedOperationException("db helper implements this");
    }

    /** Sets the final status ({@code candidate}, {@code rejected} or {@code failed}), metrics and reason. */
    public void finish(long modelId, String status, String metricsJson, String reason) {
        throw new UnsupportedOperationException("db helper implements this");
    }

    /** Makes a finished version active; the previous active one becomes {@code retired} and is remembered for rollback. */
    public void promote(long modelId) {
        throw new UnsupportedOperationException("db helper implements this");
    }

    public Optional<ModelHeader> active() {
        throw new UnsupportedOperationException("db helper implements this");
    }

    public Optional<ModelHeader> find(long modelId) {
        throw new UnsupportedOperationException("db helper implements this");
    }

    /** All versions, newest first. */
    public List<ModelHeader> list() {
        throw new UnsupportedOperationException("db helper implements this");
    }

    public ModelFactors loadFactors(long modelId) {
        throw new UnsupportedOperationException("db helper implements this");
    }
}
