package dev.twofold.db.snapshot;

/**
 * Everything stored about one user now: their ratings and the users they trust, as parallel
 * primitive arrays in the dense indices of the id maps. Ratings are sorted by item index, trust
 * edges by trustee index.
 *
 * @param userId      the external id asked for
 * @param user        the user's dense index, or -1 when nobody has this id
 * @param items       item index of each rating
 * @param ratings     rating value of each rating
 * @param trustees    trustee index of each edge this user gave
 * @param trustWeight weight in (0,1] of each edge
 */
public record UserHistory(String userId, int user, int[] items, float[] ratings, int[] trustees, float[] trustWeight) {

    /** The history of an id nobody has. */
    public static UserHistory unknown(String userId) {
        return new UserHistory(userId, -1, new int[0], new float[0], new int[0], new float[0]);
    }

    public int numRatings() {
        return ratings.length;
    }

    public int numTrustEdges() {
        return trustWeight.length;
    }
}
