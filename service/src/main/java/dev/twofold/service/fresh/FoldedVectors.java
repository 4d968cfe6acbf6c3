package dev.twofold.service.fresh;

import dev.twofold.db.snapshot.UserHistory;
import dev.twofold.service.model.ServingModel;
import dev.twofold.service.scoring.Strategy;
import dev.twofold.service.scoring.UserVector;
import dev.twofold.trainer.fit.FoldIn;
import java.util.Arrays;

/**
 * Turns a user's stored history into the vector a model serves them with, without retraining:
 *
 * <ol>
 *   <li>with ratings of items the model can score: the fold-in solve ({@link FoldIn}): (p_u, b_u)
 *       minimising the training objective with Q, b_i, μ and the trust side of the coupling (Z,
 *       or the trusted users' factors) held fixed, one (k+1)×(k+1) Cholesky solve;
 *       {@link Strategy#MODEL};</li>
 *   <li>otherwise, with trust edges to users who have factors: the trust-weighted average of
 *       their p_v and b_v, as the model does at load for such users
 *       ({@link ServingModel#trustBuiltRow}); {@link Strategy#TRUST};</li>
 *   <li>otherwise the model's own factors when it has some for the user, else popularity.</li>
 * </ol>
 * The rated list is the history's items in serving indices (sorted, since serving indices grow
 * with directory indices). Cost O((n_u + |N(u)|)·k² + k³).
 */
final class FoldedVectors {

    private FoldedVectors() {
    }

    static UserVector fold(ServingModel model, UserHistory history, FoldIn.Scratch scratch) {
        int k = model.rank();
        int[] items = new int[history.numRatings()];
        float[] ratings = new float[items.length];
        int n = 0;
        for (int j = 0; j < items.length; j++) {
            int item = model.servingIndexOf(history.items()[j]);
            if (item >= 0) {
                items[n] = item;
                ratings[n++] = history.ratings()[j];
            }
        }
        int[] rated = Arrays.copyOf(items, n);

        if (n > 0) {
            int[] trustees = new int[history.numTrustEdges()];
            float[] weights = new float[trustees.length];
            int m = 0;
            boolean neighbours = model.foldSettings().neighbours();
            for (int e = 0; e < trustees.length; e++) {
                int v = history.trustees()[e];
                // Z has a row for every trained user; the neighbour term averages only users with factors
                boolean usable = neighbours ? model.hasFactors(v) : v >= 0 && v < model.trainedUsers();
                if (usable && v != history.user()) {
                    trustees[m] = v;
                    weights[m++] = history.trustWeight()[e];
                }
            }
            if (model.foldIn().solve(items, ratings, 0, n, trustees, weights, 0, m, scratch)) {
                float[] p = new float[k];
                scratch.copyFactors(p, 0);
                return new UserVector(Strategy.MODEL, p, 0, (float) scratch.bias(), rated, 0, n);
            }
        }
        int u = history.user();
        if (model.hasFactors(u)) {
            return new UserVector(Strategy.MODEL, model.userFactors(), u * k, model.userBias()[u], rated, 0, n);
        }
        float[] p = new float[k];
        double weightSum = 0;
        double bias = 0;
        double[] sums = new double[k];
        for (int e = 0; e < history.numTrustEdges(); e++) {
            int v = history.trustees()[e];
            if (!model.hasFactors(v)) {
                continue;
            }
            double w = history.trustWeight()[e];
            weightSum += w;
            bias += w * model.userBias()[v];
            for (int x = 0; x < k; x++) {
                sums[x] += w * model.userFactors()[v * k + x];
            }
        }
        if (weightSum > 0) {
            for (int x = 0; x < k; x++) {
                p[x] = (float) (sums[x] / weightSum);
            }
            return new UserVector(Strategy.TRUST, p, 0, (float) (bias / weightSum), rated, 0, n);
        }
        return UserVector.popular(rated, 0, n);
    }
}
