package dev.twofold.trainer.evaluate;

/**
 * Ranking figures of one ranked list. {@code hits[r]} says whether the item at rank r + 1 is
 * relevant; {@code length} entries were ranked (possibly fewer than k when few candidates exist);
 * {@code relevant} counts all relevant items of the user, ranked or not.
 */
public final class RankingMetrics {

    private RankingMetrics() {
    }

    /** |relevant in the top k| / k. */
    public static double precisionAt(boolean[] hits, int length, int k) {
        return hitsWithin(hits, length, k) / (double) k;
    }

    /** |relevant in the top k| / |relevant|, NaN when nothing is relevant. */
    public static double recallAt(boolean[] hits, int length, int k, int relevant) {
        return relevant == 0 ? Double.NaN : hitsWithin(hits, length, k) / (double) relevant;
    }

    /**
     * Average precision at k: the mean of precision@r over the ranks r ≤ k that hold a relevant item,
     * divided by min(|relevant|, k) so a list that cannot hold all relevant items is not penalised for it.
     */
    public static double averagePrecisionAt(boolean[] hits, int length, int k, int relevant) {
        if (relevant == 0) {
            return Double.NaN;
        }
        int found = 0;
        double sum = 0;
        for (int r = 0; r < Math.min(length, k); r++) {
            if (hits[r]) {
                found++;
                sum += found / (double) (r + 1);
            }
        }
        return sum / Math.min(relevant, k);
    }

    /**
     * nDCG@k with gain 1 for a relevant item and discount log2(rank + 1): DCG@k of the list divided by
     * the DCG@k of a list with all relevant items first. NaN when nothing is relevant.
     */
    public static double ndcgAt(boolean[] hits, int length, int k, int relevant) {
        if (relevant == 0) {
            return Double.NaN;
        }
        double dcg = 0;
        for (int r = 0; r < Math.min(length, k); r++) {
            if (hits[r]) {
                dcg += discount(r + 1);
            }
        }
        double ideal = 0;
        for (int r = 0; r < Math.min(relevant, k); r++) {
            ideal += discount(r + 1);
        }
        return dcg / ideal;
    }

    /** DCG@k = Σ_{r ≤ k} gain_r / log2(r + 1) for graded gains in rank order. */
    public static double dcgAt(double[] gains, int k) {
        double dcg = 0;
        for (int r = 0; r < Math.min(gains.length, k); r++) {
            dcg += gains[r] * discount(r + 1);
        }
        return dcg;
    }

    /** The cumulated-gain vector CG[r] = Σ_{j ≤ r} gain_j (Järvelin and Kekäläinen, ACM TOIS 2002). */
    public static double[] cumulatedGain(double[] gains) {
        double[] cg = new double[gains.length];
        double sum = 0;
        for (int r = 0; r < gains.length; r++) {
            sum += gains[r];
            cg[r] = sum;
        }
        return cg;
    }

    /**
     * The discounted-cumulated-gain vector in its original form (Järvelin and Kekäläinen, ACM TOIS
     * 2002): DCG[r] = CG[r] for ranks r &lt; b, and DCG[r] = DCG[r−1] + gain_r / log_b(r) from rank b on.
     */
    public static double[] discountedCumulatedGain(double[] gains, double base) {
        if (!(base > 1)) {
            throw new IllegalArgumentException("log base " + base + " must exceed 1");
        }
        double[] dcg = new double[gains.length];
        double sum = 0;
        for (int r = 1; r <= gains.length; r++) {
            sum += r < base ? gains[r - 1] : gains[r - 1] * Math.log(base) / Math.log(r);
            dcg[r - 1] = sum;
        }
        return dcg;
    }

    private static double discount(int rank) {
        return 1.0 / (Math.log(rank + 1) / Math.log(2));
    }

    private static int hitsWithin(boolean[] hits, int length, int k) {
        int h = 0;
        for (int r = 0; r < Math.min(length, k); r++) {
            if (hits[r]) {
                h++;
            }
        }
        return h;
    }
}
