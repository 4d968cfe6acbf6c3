package dev.twofold.trainer.publish;

import dev.twofold.db.registry.Retention;

/**
 * What a retrain does after it has evaluated its model: whether to promote it, the quality gate it
 * must pass against the live model, and how many versions to keep afterwards.
 *
 * @param policy    {@code --promote}: auto (default), never or always
 * @param gate      the tolerances of the quality gate
 * @param retention how many versions survive the clean-up after the run
 */
public record PublishSettings(PromotionPolicy policy, QualityGate gate, Retention retention) {

    public PublishSettings {
        if (policy == null || gate == null || retention == null) {
            throw new IllegalArgumentException("policy, gate and retention are required");
        }
    }

    public static PublishSettings defaults() {
        return new PublishSettings(PromotionPolicy.AUTO, QualityGate.defaults(), Retention.defaults());
    }

    public PublishSettings withPolicy(PromotionPolicy value) {
        return new PublishSettings(value, gate, retention);
    }

    public PublishSettings withGate(QualityGate value) {
        return new PublishSettings(policy, value, retention);
    }

    public PublishSettings withRetention(Retention value) {
        return new PublishSettings(policy, gate, value);
    }
}
