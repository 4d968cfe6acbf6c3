package dev.twofold.trainer.fit;

/**
 * Solves one row of a model against the fixed other side: the user step of ALS, usable on its own for
 * a user who rated (or trusted) after training. With p̃ = (p_u, b_u), q̃_i = (q_i, 1) and ñ_u =
 * max(n_u, 1), it solves the (k+1)×(k+1) system
 *
 * <pre>
 *   A = Σ_i q̃_i q̃_iᵀ + τ (ZᵀZ + Σ_{v∈N(u)} α w_uv z_v z_vᵀ) + λ ñ_u I + γ e_b e_bᵀ
 *   c = Σ_i (r_ui − μ − b_i) q̃_i + τ Σ_{v∈N(u)} (1 + α w_uv) z_v
 *   A p̃ = c
 * </pre>
 *
 * by Cholesky factorisation, where the sums over i run over the user's ratings and those over v over
 * the users u trusts (trust terms touch only the k factor coordinates), and γ, the bias prior, adds
 * to the bias coordinate e_b only. This is the exact minimiser of
 * the training objective over (p_u, b_u) with everything else fixed (see {@link Objective}). ZᵀZ is
 * precomputed once ({@link #gram}), so the full trust row of u (target 0, weight 1 off the edges) costs
 * k² and T is never materialised. Without biases, b_u and the 1s are dropped (k×k system); without a
 * trust side, the τ terms are dropped.
 *
 * <p>Under neighbour coupling ({@link #withNeighbours}) the trust part is instead the user's own
 * SocialMF term β ‖p_u − Σ_v w̄_uv p_v‖² against the fixed factors of the users they trust (weights
 * normalised over the edges given): A gains β I and c gains β Σ_v w̄_uv p_v on the factor coordinates.
 * A user with no ratings then gets p_u = β/(β + λ) Σ_v w̄_uv p_v, the shrunk average of the trusted
 * users' vectors. Terms of other users who trust this one are not part of a fold-in.
 *
 * <p>The same solve serves the item step with the roles swapped (fixed side P, b_u; no trust).
 *
 * <p>Cost O((n_u + |N(u)|)·k² + k³), no allocation: the caller passes a {@link Scratch} (one per
 * thread). A FoldIn itself is immutable and may be shared between threads. Indices must be in range;
 * callers validate their input.
 */
public final class FoldIn {

    private final int rank;
    private final boolean biases;
    private final float globalMean;
    private final float lambda;
    private final float[] fixedFactors;
    private final float[] fixedBias;
    private final float[] trustFactors;
    private final double[] trustGram;
    private final float trustWeight;
    private final float trustAlpha;
    private final float[] neighbourFactors;
    private final float neighbourWeight;
    private final float biasPrior;

    /**
     * @param rank         k
     * @param biases       solve for the row's bias too
     * @param globalMean   μ
     * @param lambda       λ of the weighted-λ ridge
     * @param fixedFactors the other side's factors (Q for a user), row-major with stride k
     * @param fixedBias    the other side's biases (b_i for a user); ignored without biases
     * @param trustFactors Z (row-major, stride k), or null for no trust term
     * @param trustGram    ZᵀZ (k×k, row-major, full) from {@link #gram}; required with Z
     * @param trustWeight  τ
     * @param trustAlpha   α
     */
    public FoldIn(int rank, boolean biases, float globalMean, float lambda, float[] fixedFactors, float[] fixedBias,
            float[] trustFactors, double[] trustGram, float trustWeight, float trustAlpha) {
        this(rank, biases, globalMean, lambda, fixedFactors, fixedBias, trustFactors, trustGram, trustWeight, trustAlpha,
                null, 0f, 0f);
    }

    private FoldIn(int rank, boolean biases, float globalMean, float lambda, float[] fixedFactors, float[] fixedBias,
            float[] trustFactors, double[] trustGram, float trustWeight, float trustAlpha, float[] neighbourFactors,
            float neighbourWeight, float biasPrior) {
        if (rank < 0 || (rank == 0 && !biases)) {
            throw new IllegalArgumentException("rank " + rank + " with biases " + biases + " leaves nothing to solve");
        }
        if (trustFactors != null && (trustGram == null || trustGram.length != rank * rank)) {
            throw new IllegalArgumentException("trust factors need their Gram matrix of " + rank + " × " + rank);
        }
        if (!(lambda >= 0) || !(trustWeight >= 0) || !(trustAlpha >= 0) || !(biasPrior >= 0)) {
            throw new IllegalArgumentException("lambda " + lambda + ", trust weight " + trustWeight + ", trust alpha "
                    + trustAlpha + " and bias prior " + biasPrior + " must be ≥ 0");
        }
        this.rank = rank;
        this.biases = biases;
        this.globalMean = globalMean;
        this.lambda = lambda;
        this.fixedFactors = fixedFactors;
        this.fixedBias = fixedBias;
        this.trustFactors = trustFactors;
        this.trustGram = trustGram;
        this.trustWeight = trustWeight;
        this.trustAlpha = trustAlpha;
        this.neighbourFactors = neighbourFactors;
        this.neighbourWeight = neighbourWeight;
        this.biasPrior = biasPrior;
    }

    /**
     * This fold-in with bias prior γ: the bias pays γ·b² on top of λ·ñ·b² (see {@link FitSettings#biasPrior}).
     * The constructors and {@link #withNeighbours} have none (γ = 0); {@link #forModel} takes the
     * model's, and the solvers their settings'.
     */
    public FoldIn withBiasPrior(float value) {
        return new FoldIn(rank, biases, globalMean, lambda, fixedFactors, fixedBias, trustFactors, trustGram, trustWeight,
                trustAlpha, neighbourFactors, neighbourWeight, value);
    }

    /**
     * A fold-in under neighbour coupling: ratings against Q, b_i, μ, and trust edges pulling p_u
     * towards the normalised weighted average of the trusted users' rows of {@code userFactors} with
     * weight β.
     *
     * @param userFactors P (row-major, stride k) of the users that can be trusted
     * @param beta        β ≥ 0
     */
    public static FoldIn withNeighbours(int rank, boolean biases, float globalMean, float lambda, float[] itemFactors,
            float[] itemBias, float[] userFactors, float beta) {
        if (!(beta >= 0)) {
            throw new IllegalArgumentException("neighbour weight " + beta + " must be ≥ 0");
        }
        return new FoldIn(rank, biases, globalMean, lambda, itemFactors, itemBias, null, null, 0f, 0f, userFactors, beta,
                0f);
    }

    /**
     * Folds users into a fitted model: against its Q, b_i, μ and, for shared coupling, its Z; for
     * neighbour coupling, against its P through the user's trust edges.
     */
    public static FoldIn forModel(FittedModel model) {
        FitSettings s = model.settings();
        if (s.coupling() == Coupling.NEIGHBOUR) {
            return withNeighbours(model.rank(), s.biases(), model.globalMean(), s.lambda(), model.itemFactors(),
                    model.itemBias(), model.userFactors(), s.trustWeight()).withBiasPrior(s.biasPrior());
        }
        float[] z = s.sharesFactors() ? model.trustFactors() : null;
        return new FoldIn(model.rank(), s.biases(), model.globalMean(), s.lambda(), model.itemFactors(),
                model.itemBias(), z, z == null ? null : gram(z, model.numUsers(), model.rank()), s.trustWeight(),
                s.trustAlpha()).withBiasPrior(s.biasPrior());
    }

    /**
     * The Gram matrix FᵀF (k×k, full, row-major) of the first {@code rows} rows of a factor matrix,
     * summed in row order. Cost rows·k²/2.
     */
    public static double[] gram(float[] factors, int rows, int rank) {
        if ((long) rows * rank > factors.length) {
            throw new IllegalArgumentException(rows + " rows of rank " + rank + " exceed the " + factors.length + " floats given");
        }
        return NormalEquations.gram(factors, rows, rank);
    }

    public int rank() {
        return rank;
    }

    public boolean biases() {
        return biases;
    }

    /** Fresh scratch for this fold-in's rank; keep one per thread and reuse it. */
    public Scratch newScratch() {
        return new Scratch(rank);
    }

    /** Solves from ratings alone (no trust edges given). */
    public boolean solve(int[] items, float[] ratings, int from, int to, Scratch scratch) {
        return solve(items, ratings, from, to, null, null, 0, 0, scratch);
    }

    /**
     * Solves for one row. The row's ratings are {@code items[from..to)}, {@code ratings[from..to)};
     * its trust edges (used only when this fold-in has a trust side) are {@code trustees[trustFrom..trustTo)}
     * with weights {@code trustWeights[trustFrom..trustTo)}. The regularisation count is ñ = max(to − from, 1).
     *
     * @return true with the solution in {@code scratch} ({@link Scratch#copyFactors}, {@link Scratch#bias});
     *     false when the system was not positive definite or the solution not finite, and then the
     *     scratch holds no solution
     */
    public boolean solve(int[] items, float[] ratings, int from, int to, int[] trustees, float[] trustWeights,
            int trustFrom, int trustTo, Scratch scratch) {
        if (scratch.rank != rank) {
            throw new IllegalArgumentException("scratch is for rank " + scratch.rank + ", this fold-in has rank " + rank);
        }
        int dim = biases ? rank + 1 : rank;
        double[] a = scratch.a;
        double[] c = scratch.c;
        NormalEquations.clear(a, c, dim);
        addRatings(a, c, items, ratings, from, to, scratch);
        if (trustFactors != null && trustWeight > 0) {
            NormalEquations.addTrust(a, c, scratch.gathered, rank, dim, trustWeight, trustAlpha, trustFactors, trustGram,
                    trustees, trustWeights, trustFrom, trustTo);
        }
        addNeighbours(a, c, dim, trustees, trustWeights, trustFrom, trustTo, scratch.row);
        addRidge(a, dim, to - from);
        scratch.withBias = biases;
        scratch.solved = Cholesky.factor(a, dim) && Cholesky.solve(a, dim, c);
        return scratch.solved;
    }

    /**
     * Assembles (without solving) the system of one row into the scratch: used by {@link Objective}
     * for the gradient so it uses exactly the solver's equations.
     */
    void assemble(int[] items, float[] ratings, int from, int to, int[] trustees, float[] trustWeights, int trustFrom,
            int trustTo, Scratch scratch) {
        int dim = biases ? rank + 1 : rank;
        NormalEquations.clear(scratch.a, scratch.c, dim);
        addRatings(scratch.a, scratch.c, items, ratings, from, to, scratch);
        if (trustFactors != null && trustWeight > 0) {
            NormalEquations.addTrust(scratch.a, scratch.c, scratch.gathered, rank, dim, trustWeight, trustAlpha, trustFactors,
                    trustGram, trustees, trustWeights, trustFrom, trustTo);
        }
        addNeighbours(scratch.a, scratch.c, dim, trustees, trustWeights, trustFrom, trustTo, scratch.row);
        addRidge(scratch.a, dim, to - from);
        scratch.withBias = biases;
        scratch.solved = false;
    }

    /** λ·ñ on every coordinate, ñ = max(count, 1), and γ more on the bias. */
    private void addRidge(double[] a, int dim, int count) {
        NormalEquations.addRidge(a, dim, (double) lambda * Math.max(count, 1));
        if (biases) {
            a[rank * dim + rank] += biasPrior;
        }
    }

    private void addRatings(double[] a, double[] c, int[] items, float[] ratings, int from, int to, Scratch scratch) {
        NormalEquations.addRatings(a, c, scratch.gathered, scratch.targets, rank, biases, globalMean, fixedFactors,
                fixedBias, items, ratings, from, to);
    }

    private void addNeighbours(double[] a, double[] c, int dim, int[] trustees, float[] trustWeights, int trustFrom,
            int trustTo, double[] pull) {
        if (neighbourFactors == null || neighbourWeight == 0 || trustTo <= trustFrom) {
            return;
        }
        double total = 0;
        for (int at = trustFrom; at < trustTo; at++) {
            total += trustWeights[at];
        }
        for (int x = 0; x < rank; x++) {
            pull[x] = 0;
        }
        for (int at = trustFrom; at < trustTo; at++) {
            double share = trustWeights[at] / total;
            int off = trustees[at] * rank;
            for (int x = 0; x < rank; x++) {
                pull[x] += share * neighbourFactors[off + x];
            }
        }
        NormalEquations.addNeighbour(a, c, rank, dim, neighbourWeight, 1.0, pull);
    }

    /** Reusable buffers of one thread's solves, and the last solution. */
    public static final class Scratch {
        final int rank;
        final double[] a;
        final double[] c;
        final double[] row;
        final double[] gathered;
        final double[] targets;
        boolean solved;
        boolean withBias;

        Scratch(int rank) {
            this.rank = rank;
            int dim = rank + 1;
            this.a = new double[dim * dim];
            this.c = new double[dim];
            this.row = new double[dim];
            this.gathered = new double[NormalEquations.GATHER * rank];
            this.targets = new double[NormalEquations.GATHER];

        }

        /** Copies the solved factors p_u (k values) into {@code target[offset..offset+k)}. */
        public void copyFactors(float[] target, int offset) {
            requireSolved();
            for (int x = 0; x < rank; x++) {
                target[offset + x] = (float) c[x];
            }
        }

        /** The solved factor {@code x} (0 ≤ x < k) in double precision. */
        public double factor(int x) {
            requireSolved();
            if (x < 0 || x >= rank) {
                throw new IndexOutOfBoundsException("factor " + x + " outside 0.." + (rank - 1));
            }
            return c[x];
        }

        /** The solved bias b_u (0 when solving without biases). */
        public double bias() {
            requireSolved();
            return withBias ? c[rank] : 0.0;
        }

        private void requireSolved() {
            if (!solved) {
                throw new IllegalStateException("no solution: the last solve failed or none was run");
            }
        }
    }
}
