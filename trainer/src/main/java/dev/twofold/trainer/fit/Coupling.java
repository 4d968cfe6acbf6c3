package dev.twofold.trainer.fit;

import java.util.Locale;

/** How the trust matrix takes part in the fit. */
public enum Coupling {
    /**
     * Shared factors: T ≈ P·Zᵀ with the same user factors P as the ratings (the coupled form of
     * SoRec, Ma et al., CIKM 2008), T weighted as a full matrix (Hu, Koren, Volinsky, ICDM 2008).
     * The trust weight is τ.
     */
    SHARED(0.3f),
    /**
     * Neighbour regularisation: β Σ_u ‖p_u − Σ_v w̄_uv p_v‖² over the users who trust someone, with
     * w̄ the trust weights normalised per truster (SocialMF, Jamali and Ester, RecSys 2010). The trust
     * weight is β.
     */
    NEIGHBOUR(8f),
    /** Ratings only; trust is ignored. */
    NONE(0f);

    private final float defaultTrustWeight;

    Coupling(float defaultTrustWeight) {
        this.defaultTrustWeight = defaultTrustWeight;
    }

    /** The trust weight (τ or β) this coupling uses unless told otherwise, tuned on the demo data. */
    public float defaultTrustWeight() {
        return defaultTrustWeight;
    }

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
        throw new IllegalArgumentException("coupling '" + text + "' is not one of shared, neighbour, none");
    }
}
