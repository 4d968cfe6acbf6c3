package dev.twofold.service.scoring;

/**
 * The best items of one scoring pass, best first: serving item indices and their raw scores
 * (b_i + x·q_i when ranking for a user, the cosine when finding similar items).
 */
public record Ranked(int[] items, float[] scores) {

    public int size() {
        return items.length;
    }
}
