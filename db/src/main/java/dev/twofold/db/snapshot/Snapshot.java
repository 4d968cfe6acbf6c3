package dev.twofold.db.snapshot;

/**
 * A consistent read of all ratings and trust edges, as parallel primitive arrays indexed by the
 * dense user and item indices of the id maps.
 *
 * @param numUsers    user index space (max user index + 1, over users, ratings and trust)
 * @param numItems    item index space (max item index + 1)
 * @param ratingUser  user index of each rating
 * @param ratingItem  item index of each rating
 * @param rating      rating value
 * @param ratingTime  epoch seconds of each rating, or {@link #NO_TIME} when none was given
 * @param truster     truster user index of each trust edge
 * @param trustee     trustee user index of each trust edge
 * @param trustWeight weight in (0,1] of each trust edge
 */
public record Snapshot(
        int numUsers,
        int numItems,
        int[] ratingUser,
        int[] ratingItem,
        float[] rating,
        long[] ratingTime,
        int[] truster,
        int[] trustee,
        float[] trustWeight) {

    public static final long NO_TIME = Long.MIN_VALUE;

    public int numRatings() {
        return rating.length;
    }

    public int numTrustEdges() {
        return trustWeight.length;
    }
}
