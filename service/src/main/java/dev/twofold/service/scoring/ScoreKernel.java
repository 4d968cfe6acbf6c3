package dev.twofold.service.scoring;

/**
 * The arithmetic of scoring on flat row-major factor arrays. No objects, no boxing; the inner
 * products run four independent accumulators so the multiply-adds of one row overlap.
 */
final class ScoreKernel {

    private ScoreKernel() {
    }

    /**
     * {@code out[i] = b[i] + p·Q[i]} for every item row {@code i < n}, where {@code p} is the
     * k-vector starting at {@code P[pOffset]} and row i of Q starts at {@code i·k}. Adding μ + b_u,
     * a constant per user, is left to the caller. Cost: n·k multiply-adds, one pass over Q.
     */
    static void scoreItems(float[] P, int pOffset, int k, float[] Q, float[] b, int n, float[] out) {
        for (int i = 0; i < n; i++) {
            out[i] = b[i] + dot(P, pOffset, Q, i * k, k);
        }
    }

    /** Σ_f x[xOffset+f]·y[yOffset+f] for f < k, summed in float in four interleaved lanes. */
    static float dot(float[] x, int xOffset, float[] y, int yOffset, int k) {
        float s0 = 0f;
        float s1 = 0f;
        float s2 = 0f;
        float s3 = 0f;
        int f = 0;
        for (; f + 3 < k; f += 4) {
            s0 += x[xOffset + f] * y[yOffset + f];
            s1 += x[xOffset + f + 1] * y[yOffset + f + 1];
            s2 += x[xOffset + f + 2] * y[yOffset + f + 2];
            s3 += x[xOffset + f + 3] * y[yOffset + f + 3];
        }
        for (; f < k; f++) {
            s0 += x[xOffset + f] * y[yOffset + f];
        }
        return (s0 + s1) + (s2 + s3);
    }
}
