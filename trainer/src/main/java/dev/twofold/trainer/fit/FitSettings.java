package dev.twofold.trainer.fit;

import dev.twofold.trainer.parallel.Workers;

/**
 * Everything a fit needs besides the data, validated on construction: a bad value fails with a
 * message naming the setting, its value and the allowed range.
 *
 * @param rank        k, number of latent factors; 0 fits biases only
 * @param lambda      λ, weighted-λ regularisation per observation (Zhou et al. 2008)
 * @param trustWeight weight of the trust term against the ratings term: τ for shared coupling, β for
 *                    neighbour coupling (unused without coupling)
 * @param trustAlpha  α, confidence of an observed trust edge: c = 1 + α·w (shared coupling)
 * @param epochs      maximum number of ALS epochs
 * @param seed        seeds the initial factors
 * @param threads     worker threads; the result does not depend on it
 * @param coupling    how trust takes part
 * @param biases      fit μ, b_u and b_i (off only for checks against a plain low-rank approximation)
 * @param patience    stop after this many epochs without a better validation RMSE and keep the best
 *                    epoch's factors; 0 runs all epochs
 * @param initScale   standard deviation of the initial factors is initScale / √k
 * @param biasPrior   γ, a ridge γ·b² on every bias that does not grow with its count, on top of λ's:
 *                    a bias is estimated as if it had γ more ratings with nothing to explain, so the
 *                    leniency of a user with one or two ratings is not read off their noise
 */
public record FitSettings(
        int rank,
        float lambda,
        float trustWeight,
        float trustAlpha,
        int epochs,
        long seed,
        int threads,
        Coupling coupling,
        boolean biases,
        int patience,
        float initScale,
        float biasPrior) {

    public static final int DEFAULT_RANK = 8;
    public static final float DEFAULT_LAMBDA = 0.02f;
    public static final float DEFAULT_TRUST_ALPHA = 30f;
    public static final int DEFAULT_EPOCHS = 20;
    public static final long DEFAULT_SEED = 42;
    public static final int DEFAULT_THREADS = 1;
    public static final Coupling DEFAULT_COUPLING = Coupling.NEIGHBOUR;
    public static final float DEFAULT_TRUST_WEIGHT = DEFAULT_COUPLING.defaultTrustWeight();
    public static final int DEFAULT_PATIENCE = 0;
    public static final float DEFAULT_INIT_SCALE = 0.1f;
    public static final float DEFAULT_BIAS_PRIOR = 2f;

    public static final int MAX_RANK = 1024;
    public static final float MAX_LAMBDA = 1e6f;
    public static final float MAX_TRUST_WEIGHT = 1e6f;
    public static final float MAX_TRUST_ALPHA = 1e6f;
    public static final int MAX_EPOCHS = 100_000;
    public static final float MAX_INIT_SCALE = 10f;
    public static final float MAX_BIAS_PRIOR = 1e6f;

    public FitSettings {
        if (rank < 0 || rank > MAX_RANK) {
            throw new IllegalArgumentException("rank " + rank + " outside 0.." + MAX_RANK);
        }
        if (rank == 0 && !biases) {
            throw new IllegalArgumentException("rank 0 without biases leaves nothing to fit; use rank ≥ 1 or biases");
        }
        check("lambda", lambda, MAX_LAMBDA);
        check("trust weight", trustWeight, MAX_TRUST_WEIGHT);
        check("trust alpha", trustAlpha, MAX_TRUST_ALPHA);
        check("bias prior", biasPrior, MAX_BIAS_PRIOR);
        if (epochs < 1 || epochs > MAX_EPOCHS) {
            throw new IllegalArgumentException("epochs " + epochs + " outside 1.." + MAX_EPOCHS);
        }
        if (threads < 1 || threads > Workers.MAX_THREADS) {
            throw new IllegalArgumentException("threads " + threads + " outside 1.." + Workers.MAX_THREADS);
        }
        if (coupling == null) {
            throw new IllegalArgumentException("coupling is required: shared, neighbour or none");
        }
        if (patience < 0 || patience > MAX_EPOCHS) {
            throw new IllegalArgumentException("patience " + patience + " outside 0.." + MAX_EPOCHS);
        }
        if (!(initScale > 0 && initScale <= MAX_INIT_SCALE)) {
            throw new IllegalArgumentException("init scale " + initScale + " outside (0, " + MAX_INIT_SCALE + "]");
        }
    }

    private static void check(String name, float value, float max) {
        if (!(value >= 0 && value <= max)) {
            throw new IllegalArgumentException(name + " " + value + " outside 0.." + max);
        }
    }

    /**
     * The defaults, chosen on a validation split of the demo community (docs/benchmarks.md, "How the
     * defaults were chosen"): rank 8, λ 0.02, neighbour coupling with β 8 (α 30 for shared coupling),
     * bias prior γ 2, 20 epochs, biases on, no early stopping.
     */
    public static FitSettings defaults() {
        return new FitSettings(DEFAULT_RANK, DEFAULT_LAMBDA, DEFAULT_TRUST_WEIGHT, DEFAULT_TRUST_ALPHA, DEFAULT_EPOCHS,
                DEFAULT_SEED, DEFAULT_THREADS, DEFAULT_COUPLING, true, DEFAULT_PATIENCE, DEFAULT_INIT_SCALE,
                DEFAULT_BIAS_PRIOR);
    }

    public FitSettings withRank(int value) {
        return new FitSettings(value, lambda, trustWeight, trustAlpha, epochs, seed, threads, coupling, biases, patience,
                initScale, biasPrior);
    }

    public FitSettings withLambda(float value) {
        return new FitSettings(rank, value, trustWeight, trustAlpha, epochs, seed, threads, coupling, biases, patience,
                initScale, biasPrior);
    }

    public FitSettings withTrust(float weight, float alpha) {
        return new FitSettings(rank, lambda, weight, alpha, epochs, seed, threads, coupling, biases, patience,
                initScale, biasPrior);
    }

    public FitSettings withEpochs(int value) {
        return new FitSettings(rank, lambda, trustWeight, trustAlpha, value, seed, threads, coupling, biases, patience,
                initScale, biasPrior);
    }

    public FitSettings withSeed(long value) {
        return new FitSettings(rank, lambda, trustWeight, trustAlpha, epochs, value, threads, coupling, biases, patience,
                initScale, biasPrior);
    }

    public FitSettings withThreads(int value) {
        return new FitSettings(rank, lambda, trustWeight, trustAlpha, epochs, seed, value, coupling, biases, patience,
                initScale, biasPrior);
    }

    public FitSettings withCoupling(Coupling value) {
        return new FitSettings(rank, lambda, trustWeight, trustAlpha, epochs, seed, threads, value, biases, patience,
                initScale, biasPrior);
    }

    public FitSettings withBiases(boolean value) {
        return new FitSettings(rank, lambda, trustWeight, trustAlpha, epochs, seed, threads, coupling, value, patience,
                initScale, biasPrior);
    }

    public FitSettings withPatience(int value) {
        return new FitSettings(rank, lambda, trustWeight, trustAlpha, epochs, seed, threads, coupling, biases, value,
                initScale, biasPrior);
    }

    public FitSettings withInitScale(float value) {
        return new FitSettings(rank, lambda, trustWeight, trustAlpha, epochs, seed, threads, coupling, biases, patience,
                value, biasPrior);
    }

    public FitSettings withBiasPrior(float value) {
        return new FitSettings(rank, lambda, trustWeight, trustAlpha, epochs, seed, threads, coupling, biases, patience,
                initScale, value);
    }

    /** True when the trust matrix takes part through shared factors. */
    public boolean sharesFactors() {
        return coupling == Coupling.SHARED;
    }
}
