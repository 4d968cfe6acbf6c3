package dev.twofold.trainer.publish;

/** What a retrain did with its model. */
public enum Decision {
    /** The model is now the active one. */
    PROMOTED,
    /** The model was stored but is worse than the active one on the same held-out rows. */
    REJECTED
}
