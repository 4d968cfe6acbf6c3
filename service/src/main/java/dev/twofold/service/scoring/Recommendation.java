package dev.twofold.service.scoring;

/**
 * A ranked list for one user: {@code items[j]} (serving item indices of the model that ranked
 * them) with predicted ratings {@code scores[j]}, best first.
 */
public record Recommendation(Strategy strategy, int[] items, float[] scores) {

    public int size() {
        return items.length;
    }
}
