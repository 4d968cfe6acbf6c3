package dev.twofold.trainer.evaluate;

import dev.twofold.trainer.fit.FittedModel;

/**
 * A fitted model as a scorer whose block scores are a blocked matrix product. The item factors are
 * transposed and widened to double once into panels of {@value #PANEL} items: panel (b, a) holds
 * q_ia for the items of block b. Scoring a block for a group of users builds each user's row of
 * scores by passes {@code s[j] = s[j] + p_ua·Q[b,a][j] + p_u(a+1)·Q[b,a+1][j] + …} (up to four
 * factors a pass, a = 0..k−1 in order) over the block: unit stride in every array, so the loop over
 * items vectorises, the panels of a block stay in cache for the whole group, and no score waits on a
 * k-long chain of dependent additions. Then {@code score = (μ + b_u + b_i) + s}.
 *
 * <p>Every product of two floats is exact in double and every score adds its k products one by one
 * in factor order starting from 0, then adds μ + b_u + b_i, as {@link FittedModel#scoreItems} does:
 * the scores are the same doubles, bit for bit, so rankings (ties included) are unchanged. Cost
 * O(users · items · k) multiply-adds; 8·k·numItems bytes for the panels.
 */
final class FactorScorer implements Scorer {

    /** Items per panel; {@link Evaluator} scores blocks of exactly these. */
    static final int PANEL = 512;

    private final FittedModel model;
    private final int k;
    private final int numItems;
    private final float[] p;
    private final float[] userBias;
    private final double globalMean;
    /** Panel (b, a) at {@code b·k + a}: factor a of the items of block b, zero past the last item. */
    private final double[][] panels;
    /** Item biases by block. */
    private final double[][] biases;

    FactorScorer(FittedModel model) {
        this.model = model;
        this.k = model.rank();
        this.numItems = model.numItems();
        this.p = model.userFactors();
        this.userBias = model.userBias();
        this.globalMean = model.globalMean();
        float[] q = model.itemFactors();
        float[] bi = model.itemBias();
        int blocks = (numItems + PANEL - 1) / PANEL;
        this.panels = new double[blocks * k][PANEL];
        this.biases = new double[blocks][PANEL];
        for (int i = 0; i < numItems; i++) {
            int b = i / PANEL;
            int j = i % PANEL;
            biases[b][j] = bi[i];
            for (int a = 0; a < k; a++) {
                panels[b * k + a][j] = q[i * k + a];
            }
        }
    }

    @Override
    public double score(int user, int item) {
        return model.score(user, item);
    }

    @Override
    public void scoreBlock(int[] users, int count, int from, int to, double[][] out) {
        if (from < 0 || to > numItems || from > to) {
            throw new IllegalArgumentException("items " + from + ".." + to + " asked of a model of " + numItems + " items");
        }
        if (from % PANEL != 0 || to - from > PANEL) {
            scoreUnaligned(users, count, from, to, out);
            return;
        }
        int b = from / PANEL;
        int w = to - from;
        double[] bias = biases[b];
        for (int g = 0; g < count; g++) {
            int u = users[g];
            double[] s = out[g];
            int pu = u * k;
            if (k == 0) {
                for (int j = 0; j < w; j++) {
                    s[j] = 0.0;
                }
            }
            for (int a = 0; a < k; a += 4) {
                accumulate(s, w, a == 0, p, pu + a, panels, b * k + a, Math.min(4, k - a));
            }
            double base = globalMean + userBias[u];
            for (int j = 0; j < w; j++) {
                s[j] = base + bias[j] + s[j];
            }
        }
    }

    /**
     * Adds {@code terms} (1..4) products p[pa + t]·panels[qa + t][j] to s[j], one at a time in order;
     * the first pass starts from 0 instead of s.
     */
    private static void accumulate(double[] s, int w, boolean first, float[] p, int pa, double[][] panels, int qa,
            int terms) {
        double p0 = p[pa];
        double[] q0 = panels[qa];
        switch (terms) {
            case 1 -> {
                if (first) {
                    for (int j = 0; j < w; j++) {
                        s[j] = 0.0 + p0 * q0[j];
                    }
                } else {
                    for (int j = 0; j < w; j++) {
                        s[j] = s[j] + p0 * q0[j];
                    }
                }
            }
            case 2 -> {
                double p1 = p[pa + 1];
                double[] q1 = panels[qa + 1];
                if (first) {
                    for (int j = 0; j < w; j++) {
                        s[j] = 0.0 + p0 * q0[j] + p1 * q1[j];
                    }
                } else {
                    for (int j = 0; j < w; j++) {
                        s[j] = s[j] + p0 * q0[j] + p1 * q1[j];
                    }
                }
            }
            case 3 -> {
                double p1 = p[pa + 1];
                double p2 = p[pa + 2];
                double[] q1 = panels[qa + 1];
                double[] q2 = panels[qa + 2];
                if (first) {
                    for (int j = 0; j < w; j++) {
                        s[j] = 0.0 + p0 * q0[j] + p1 * q1[j] + p2 * q2[j];
                    }
                } else {
                    for (int j = 0; j < w; j++) {
                        s[j] = s[j] + p0 * q0[j] + p1 * q1[j] + p2 * q2[j];
                    }
                }
            }
            default -> {
                double p1 = p[pa + 1];
                double p2 = p[pa + 2];
                double p3 = p[pa + 3];
                double[] q1 = panels[qa + 1];
                double[] q2 = panels[qa + 2];
                double[] q3 = panels[qa + 3];
                if (first) {
                    for (int j = 0; j < w; j++) {
                        s[j] = 0.0 + p0 * q0[j] + p1 * q1[j] + p2 * q2[j] + p3 * q3[j];
                    }
                } else {
                    for (int j = 0; j < w; j++) {
                        s[j] = s[j] + p0 * q0[j] + p1 * q1[j] + p2 * q2[j] + p3 * q3[j];
                    }
                }
            }
        }
    }

    /** The same arithmetic one item at a time, for a range that is not one panel. */
    private void scoreUnaligned(int[] users, int count, int from, int to, double[][] out) {
        for (int g = 0; g < count; g++) {
            int u = users[g];
            double base = globalMean + userBias[u];
            for (int i = from; i < to; i++) {
                double s = 0;
                for (int a = 0; a < k; a++) {
                    s += p[u * k + a] * panels[(i / PANEL) * k + a][i % PANEL];
                }
                out[g][i - from] = base + biases[i / PANEL][i % PANEL] + s;
            }
        }
    }
}
