package dev.twofold.trainer.planted;

import java.util.Locale;

/**
 * A generated cooking community: ratings with their noise-free values, follows, and who is who.
 * Arrays are parallel by rating row (or by trust edge) and are the community's own: read-only.
 */
public final class PlantedCommunity {

    private final CommunitySpec spec;
    private final int[] ratingUser;
    private final int[] ratingItem;
    private final float[] rating;
    private final long[] ratingTime;
    private final double[] trueScore;
    private final int[] truster;
    private final int[] trustee;
    private final float[] trustWeight;
    private final int[] community;
    private final boolean[] newcomer;
    private final Truth truth;
    private final String cookFormat;
    private final String recipeFormat;

    PlantedCommunity(CommunitySpec spec, int[] ratingUser, int[] ratingItem, float[] rating, long[] ratingTime,
            double[] trueScore, int[] truster, int[] trustee, float[] trustWeight, int[] community, boolean[] newcomer, Truth truth) {
        this.spec = spec;
        this.ratingUser = ratingUser;
        this.ratingItem = ratingItem;
        this.rating = rating;
        this.ratingTime = ratingTime;
        this.trueScore = trueScore;
        this.truster = truster;
        this.trustee = trustee;
        this.trustWeight = trustWeight;
        this.community = community;
        this.newcomer = newcomer;
        this.truth = truth;
        this.cookFormat = "cook-%0" + Math.max(5, digits(spec.cooks() - 1)) + "d";
        this.recipeFormat = "recipe-%0" + Math.max(4, digits(spec.recipes() - 1)) + "d";
    }

    private static int digits(int v) {
        return Integer.toString(Math.max(v, 0)).length();
    }

    public CommunitySpec spec() {
        return spec;
    }

    public int numCooks() {
        return spec.cooks();
    }

    public int numRecipes() {
        return spec.recipes();
    }

    public int numRatings() {
        return rating.length;
    }

    public int numFollows() {
        return trustWeight.length;
    }

    public int[] ratingUser() {
        return ratingUser;
    }

    public int[] ratingItem() {
        return ratingItem;
    }

    /** The observed rating: noise added, rounded and clamped to 1..5. */
    public float[] rating() {
        return rating;
    }

    /** Epoch seconds of each rating. */
    public long[] ratingTime() {
        return ratingTime;
    }

    /** The noise-free value μ + b_u + b_i + p_u·q_i behind each rating (not rounded, not clamped). */
    public double[] trueScore() {
        return trueScore;
    }

    public int[] truster() {
        return truster;
    }

    public int[] trustee() {
        return trustee;
    }

    public float[] trustWeight() {
        return trustWeight;
    }

    /** The taste community of each cook. */
    public int community(int cook) {
        return community[cook];
    }

    /** True for a cook who joined recently with only 1–3 ratings. */
    public boolean isNewcomer(int cook) {
        return newcomer[cook];
    }

    public String cookId(int cook) {
        return String.format(Locale.ROOT, cookFormat, cook);
    }

    public String recipeId(int recipe) {
        return String.format(Locale.ROOT, recipeFormat, recipe);
    }

    /** The noise-free value μ + b_u + b_i + p_u·q_i of any pair, rated or not. */
    public double trueScore(int cook, int recipe) {
        return truth.score(cook, recipe);
    }

    /**
     * The noise floor on the given rating rows: RMSE of the planted truth, clamped to the scale as a
     * model's prediction would be, against the observed ratings. NaN for no rows.
     */
    public double noiseFloorRmse(int[] positions) {
        if (positions.length == 0) {
            return Double.NaN;
        }
        double sum = 0;
        for (int p : positions) {
            double t = Math.max(CookingCommunity.SCALE_MIN, Math.min(CookingCommunity.SCALE_MAX, trueScore[p]));
            double e = rating[p] - t;
            sum += e * e;
        }
        return Math.sqrt(sum / positions.length);
    }

    /** The planted parameters behind every rating. */
    Truth truth() {
        return truth;
    }

    /** The planted parameters: μ, b_u, b_i, and taste (P) and flavour (Q) vectors, row-major with stride k. */
    record Truth(double mean, double[] cookBias, double[] recipeQuality, double[] taste, double[] flavour) {

        double score(int u, int i) {
            int k = taste.length / cookBias.length;
            double s = mean + cookBias[u] + recipeQuality[i];
            for (int a = 0; a < k; a++) {
                s += taste[u * k + a] * flavour[i * k + a];
            }
            return s;
        }
    }
}
