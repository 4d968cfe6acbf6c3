package dev.twofold.trainer.planted;

/**
 * The shape of a generated cooking community, validated on construction.
 *
 * @param cooks                 number of cooks (users)
 * @param recipes               number of recipes (items)
 * @param communities           taste communities; each cook belongs to one
 * @param rank                  dimension of the planted taste vectors
 * @param noise                 standard deviation σ of the Gaussian noise added to each rating before rounding
 * @param wholeStars            round ratings to whole stars 1..5 (else to one decimal in [1, 5])
 * @param newcomerShare         share of cooks who are newcomers with only 1–3 ratings
 * @param typicalRatings        median number of ratings of a regular cook (long-tailed above it)
 * @param follows               average number of cooks each cook follows
 * @param followWithinCommunity share of follows that go to a cook of the same community
 * @param seed                  the whole community follows from it
 */
public record CommunitySpec(
        int cooks,
        int recipes,
        int communities,
        int rank,
        double noise,
        boolean wholeStars,
        double newcomerShare,
        int typicalRatings,
        int follows,
        double followWithinCommunity,
        long seed) {

    public static final int DEFAULT_COOKS = 2000;
    public static final int DEFAULT_RECIPES = 500;
    public static final int DEFAULT_COMMUNITIES = 8;
    public static final int DEFAULT_RANK = 6;
    public static final double DEFAULT_NOISE = 0.4;
    public static final double DEFAULT_NEWCOMER_SHARE = 0.15;
    public static final int DEFAULT_TYPICAL_RATINGS = 40;
    public static final int DEFAULT_FOLLOWS = 8;
    public static final double DEFAULT_FOLLOW_WITHIN_COMMUNITY = 0.85;
    public static final long DEFAULT_SEED = 7;
    public static final int MAX_COOKS = 10_000_000;
    public static final int MAX_RECIPES = 1_000_000;

    public CommunitySpec {
        range("cooks", cooks, 2, MAX_COOKS);
        range("recipes", recipes, 2, MAX_RECIPES);
        range("communities", communities, 1, cooks);
        range("rank", rank, 1, 256);
        if (!(noise >= 0 && noise <= 5)) {
            throw new IllegalArgumentException("noise " + noise + " outside 0..5");
        }
        if (!(newcomerShare >= 0 && newcomerShare <= 1)) {
            throw new IllegalArgumentException("newcomer share " + newcomerShare + " outside 0..1");
        }
        range("typical ratings", typicalRatings, 1, recipes);
        range("follows", follows, 0, cooks - 1);
        if (!(followWithinCommunity >= 0 && followWithinCommunity <= 1)) {
            throw new IllegalArgumentException("follow-within-community share " + followWithinCommunity + " outside 0..1");
        }
    }

    private static void range(String name, int value, int min, int max) {
        if (value < min || value > max) {
            throw new IllegalArgumentException(name + " " + value + " outside " + min + ".." + max);
        }
    }

    /** 2000 cooks, 500 recipes, 8 communities of taste, whole stars, 15% newcomers. */
    public static CommunitySpec defaults() {
        return new CommunitySpec(DEFAULT_COOKS, DEFAULT_RECIPES, DEFAULT_COMMUNITIES, DEFAULT_RANK, DEFAULT_NOISE, true,
                DEFAULT_NEWCOMER_SHARE, DEFAULT_TYPICAL_RATINGS, DEFAULT_FOLLOWS, DEFAULT_FOLLOW_WITHIN_COMMUNITY,
                DEFAULT_SEED);
    }

    public CommunitySpec withSize(int cookCount, int recipeCount) {
        return new CommunitySpec(cookCount, recipeCount, Math.min(communities, cookCount), rank, noise, wholeStars,
                newcomerShare, Math.min(typicalRatings, recipeCount), Math.min(follows, cookCount - 1),
                followWithinCommunity, seed);
    }

    public CommunitySpec withSeed(long value) {
        return new CommunitySpec(cooks, recipes, communities, rank, noise, wholeStars, newcomerShare, typicalRatings,
                follows, followWithinCommunity, value);
    }

    public CommunitySpec withWholeStars(boolean value) {
        return new CommunitySpec(cooks, recipes, communities, rank, noise, value, newcomerShare, typicalRatings, follows,
                followWithinCommunity, seed);
    }

    public CommunitySpec withNoise(double value) {
        return new CommunitySpec(cooks, recipes, communities, rank, value, wholeStars, newcomerShare, typicalRatings,
                follows, followWithinCommunity, seed);
    }
}
