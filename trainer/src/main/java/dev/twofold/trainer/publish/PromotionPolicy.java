package dev.twofold.trainer.publish;

import java.util.Locale;

/** What a retrain does with its model once it is stored ({@code --promote}). */
public enum PromotionPolicy {
    /** Promote only when the quality gate passes against the live model (or no model is live); else reject. */
    AUTO,
    /** Never promote: keep the model as a {@code candidate} for a person to promote ({@code twofold models promote ID}). */
    NEVER,
    /** Always promote, whatever the gate says (the gate's verdict is still recorded). */
    ALWAYS;

    public String label() {
        return name().toLowerCase(Locale.ROOT);
    }

    /** @throws IllegalArgumentException naming the allowed values */
    public static PromotionPolicy parse(String text) {
        for (PromotionPolicy p : values()) {
            if (p.label().equals(text)) {
                return p;
            }
        }
        throw new IllegalArgumentException("promote '" + text + "' is not one of auto, never, always");
    }
}
