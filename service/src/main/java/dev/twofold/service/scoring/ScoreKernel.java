package dev.twofold.service.scoring;

/**
 * One inner product on flat row-major factor arrays, for single predictions (ranking every item
 * goes through {@link ScoringEngine}). Four independent accumulators let the multiply-adds overlap.
 */
final class ScoreKernel {

    private ScoreKernel() {
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
