package dev.twofold.trainer.fit;

import java.util.Locale;

/** How the trust matrix takes part in the fit. */
public enum Coupling {
    /**
     * Shared factors: T ≈ P·Zᵀ with the same user factors P as the ratings (the coupled form of
     * SoRec, Ma et al., CIKM 2008), T weighted as a full matrix (Hu, Koren, Volinsky, ICDM 2008).
     */
    SHARED,
    /** Ratings only; trust is ignored. */
    NONE;

    /** The lower-case name used on the command line and in the model registry. */
    public String label() {
        return name().toLowerCase(Locale.ROOT);
    }

    /** Parses a {@link #label()}. */
    public static Coupling parse(String text) {
        for (Coupling c : values()) {
            if (c.label().equals(text)) {
                return c;
            }
        }
        throw new IllegalArgumentException("coupling '" + text + "' is not one of shared, none");
    }
}
