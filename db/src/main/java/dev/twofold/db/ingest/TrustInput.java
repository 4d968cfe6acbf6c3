package dev.twofold.db.ingest;

/**
 * One trust edge sent by the product backend: {@code truster} follows {@code trustee}'s taste.
 *
 * @param weight in (0, 1]; {@link #DEFAULT_WEIGHT} when the backend gives none
 */
public record TrustInput(String truster, String trustee, double weight) {
    public static final double DEFAULT_WEIGHT = 1.0;

    public TrustInput(String truster, String trustee) {
        this(truster, trustee, DEFAULT_WEIGHT);
    }
}
