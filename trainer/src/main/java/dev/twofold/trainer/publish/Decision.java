package dev.twofold.trainer.publish;

import java.util.Locale;

/** What a retrain did with its model (the {@code outcome} of the report). */
public enum Decision {
    /** The model is now the active one. */
    PROMOTED,
    /**
     * The model was stored as a {@code candidate} and not promoted: {@code --promote never}, or the
     * active model was changed by hand while the retrain ran. Promote it with {@code twofold models promote ID}.
     */
    CANDIDATE,
    /** The model was stored as {@code rejected}: under {@code --promote auto} it failed the quality gate. */
    REJECTED;

    /** {@code promoted}, {@code candidate} or {@code rejected}: the word reports and JSON use. */
    public String label() {
        return name().toLowerCase(Locale.ROOT);
    }
}
