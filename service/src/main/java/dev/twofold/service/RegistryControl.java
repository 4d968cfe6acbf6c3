package dev.twofold.service;

import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.service.http.ModelControl;
import java.util.List;
import java.util.Optional;

/** {@link ModelControl} on the registry; after a promotion or rollback this service checks at once. */
final class RegistryControl implements ModelControl {

    private final ModelRegistry registry;
    private final Runnable changed;

    RegistryControl(ModelRegistry registry, Runnable changed) {
        this.registry = registry;
        this.changed = changed;
    }

    @Override
    public List<ModelHeader> list() {
        return registry.list();
    }

    @Override
    public Optional<ModelHeader> find(long modelId) {
        return registry.find(modelId);
    }

    @Override
    public Pointer pointer() {
        return new Pointer(registry.active().map(ModelHeader::id), registry.previous());
    }

    @Override
    public Pointer promote(long modelId) {
        registry.promote(modelId);
        changed.run();
        return pointer();
    }

    @Override
    public Pointer rollback() {
        registry.rollback();
        changed.run();
        return pointer();
    }
}
