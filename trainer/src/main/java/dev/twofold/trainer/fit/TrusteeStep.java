package dev.twofold.trainer.fit;

import dev.twofold.trainer.data.TrustGraph;

/**
 * The Z step of shared-factor ALS: for trustee v, with P fixed and m̃_v = max(number of users who
 * trust v, 1),
 *
 * <pre>
 *   (τ (PᵀP + Σ_{u: v∈N(u)} α w_uv p_u p_uᵀ) + λ m̃_v I) z_v = τ Σ_{u: v∈N(u)} (1 + α w_uv) p_u
 * </pre>
 *
 * the exact minimiser of the objective over z_v: the column v of T against all users through PᵀP
 * (the Gram trick), corrected on the observed edges. Cost O(|in(v)|·k² + k³) per row given PᵀP.
 */
final class TrusteeStep {

    private final int rank;
    private final float lambda;
    private final float tau;
    private final float alpha;
    private final float[] userFactors;
    private final double[] userGram;
    private final TrustGraph trust;

    TrusteeStep(int rank, float lambda, float tau, float alpha, float[] userFactors, double[] userGram, TrustGraph trust) {
        this.rank = rank;
        this.lambda = lambda;
        this.tau = tau;
        this.alpha = alpha;
        this.userFactors = userFactors;
        this.userGram = userGram;
        this.trust = trust;
    }

    void assemble(int v, FoldIn.Scratch scratch) {
        int from = trust.inStart()[v];
        int to = trust.inStart()[v + 1];
        NormalEquations.clear(scratch.a, scratch.c, rank);
        NormalEquations.addTrust(scratch.a, scratch.c, scratch.gathered, rank, rank, tau, alpha, userFactors, userGram,
                trust.trusters(), trust.inWeights(), from, to);
        NormalEquations.addRidge(scratch.a, rank, (double) lambda * Math.max(to - from, 1));
        scratch.withBias = false;
        scratch.solved = false;
    }

    /** Solves for z_v into the scratch; false when the system is not positive definite. */
    boolean solve(int v, FoldIn.Scratch scratch) {
        assemble(v, scratch);
        scratch.solved = Cholesky.factor(scratch.a, rank) && Cholesky.solve(scratch.a, rank, scratch.c);
        return scratch.solved;
    }
}
