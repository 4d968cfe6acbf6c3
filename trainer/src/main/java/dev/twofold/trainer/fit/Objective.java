package dev.twofold.trainer.fit;

import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import dev.twofold.trainer.parallel.Workers;

/**
 * The training objective the solvers minimise, and its gradient. With ñ = max(count, 1):
 *
 * <pre>
 *   L = Σ_(u,i)∈R (r_ui − μ − b_u − b_i − p_u·q_i)²
 *     + τ Σ_u Σ_v c_uv (t_uv − p_u·z_v)²                                (shared coupling only)
 *     + β Σ_{u∈U_T} ‖p_u − Σ_{v∈N(u)} w̄_uv p_v‖²                           (neighbour coupling only)
 *     + λ (Σ_u ñ_u (‖p_u‖² + b_u²) + Σ_i ñ_i (‖q_i‖² + b_i²) + Σ_v ñ_v ‖z_v‖²)
 *     + γ (Σ_u b_u² + Σ_i b_i²)
 * </pre>
 *
 * where t_uv = 1 with confidence c_uv = 1 + α·w_uv on an observed edge and t_uv = 0 with c_uv = 1 on
 * every other cell of the m×m trust matrix (Hu, Koren, Volinsky, ICDM 2008), ñ_v counts the users
 * who trust v, and the Z term is present only with shared coupling (SoRec, Ma et al., CIKM 2008;
 * weighted-λ from Zhou et al., AAIM 2008). The neighbour term runs over the users U_T who trust
 * someone, with w̄ the trust weights normalised per truster (SocialMF, Jamali and Ester, RecSys 2010;
 * see {@link NeighbourTerm}); β is the settings' trust weight. γ is the bias prior
 * ({@link FitSettings#biasPrior}): the weighted-λ ridge alone shrinks a bias by 1/(1 + λ) whatever its
 * count, so a user with one rating would take that rating's whole noise as their leniency; γ shrinks
 * biases with few ratings towards 0 (b = Σ residual / (n(1 + λ) + γ)) and barely touches the others. The sum over all m² trust cells is evaluated without
 * materialising T:
 *
 * <pre>
 *   Σ_u Σ_v c_uv (t_uv − p_u·z_v)² = tr(PᵀP · ZᵀZ) + Σ_(u,v)∈E [c_uv (1 − p_u·z_v)² − (p_u·z_v)²]
 * </pre>
 *
 * Cost O(nnz·k + |E|·k + (m + n)·k²).
 */
public final class Objective {

    private Objective() {
    }

    /** Users per block of the rating sums: partial sums per block are added in block order. */
    private static final int USERS_PER_BLOCK = 256;

    /** L at the model's parameters, with the model's settings (λ, τ, α, coupling, biases). */
    public static double value(TrainingData data, FittedModel model) {
        try (Workers workers = new Workers(1)) {
            return value(data, model, workers);
        }
    }

    /**
     * L computed with {@code workers}: the ratings and the users' regularisation are summed per fixed
     * block of users, so the value is bitwise the same for any number of threads.
     */
    static double value(TrainingData data, FittedModel model, Workers workers) {
        FitSettings s = model.settings();
        RatingMatrix r = data.ratings();
        TrustGraph t = data.trust();
        requireShape(r, model);
        int k = model.rank();
        float[] p = model.userFactors();
        float[] bu = model.userBias();
        float[] q = model.itemFactors();
        float[] bi = model.itemBias();
        int m = r.numUsers();
        int n = r.numItems();

        int[] start = r.userStart();
        int[] items = r.userItems();
        float[] values = r.userValues();
        int blocks = (m + USERS_PER_BLOCK - 1) / USERS_PER_BLOCK;
        double[] fitParts = new double[blocks];
        double[] regParts = new double[blocks];
        double[] biasParts = new double[blocks];
        workers.forEachChunk(m, USERS_PER_BLOCK, 2 * USERS_PER_BLOCK, (w, from, to) -> {
            for (int b = from / USERS_PER_BLOCK; b * USERS_PER_BLOCK < to; b++) {
                double fit = 0;
                double reg = 0;
                double bias = 0;
                for (int u = b * USERS_PER_BLOCK; u < Math.min(to, (b + 1) * USERS_PER_BLOCK); u++) {
                    for (int at = start[u]; at < start[u + 1]; at++) {
                        double e = values[at] - model.score(u, items[at]);
                        fit += e * e;
                    }
                    reg += Math.max(r.userCount(u), 1) * (squaredNorm(p, u * k, k) + (double) bu[u] * bu[u]);
                    bias += (double) bu[u] * bu[u];
                }
                fitParts[b] = fit;
                regParts[b] = reg;
                biasParts[b] = bias;
            }
        });
        double fit = 0;
        double reg = 0;
        double biasReg = 0;
        for (int b = 0; b < blocks; b++) {
            fit += fitParts[b];
            reg += regParts[b];
            biasReg += biasParts[b];
        }
        for (int i = 0; i < n; i++) {
            reg += Math.max(r.itemCount(i), 1) * (squaredNorm(q, i * k, k) + (double) bi[i] * bi[i]);
            biasReg += (double) bi[i] * bi[i];
        }

        double trust = 0;
        if (s.sharesFactors()) {
            float[] z = model.trustFactors();
            for (int v = 0; v < m; v++) {
                reg += Math.max(t.inDegree(v), 1) * squaredNorm(z, v * k, k);
            }
            if (s.trustWeight() > 0) {
                double[] pg = NormalEquations.gram(p, m, k);
                double[] zg = NormalEquations.gram(z, m, k);
                double all = 0;
                for (int x = 0; x < k * k; x++) {
                    all += pg[x] * zg[x];
                }
                int[] outStart = t.outStart();
                int[] trustees = t.trustees();
                float[] w = t.outWeights();
                double edges = 0;
                for (int u = 0; u < m; u++) {
                    for (int at = outStart[u]; at < outStart[u + 1]; at++) {
                        double dot = dot(p, u * k, z, trustees[at] * k, k);
                        double c = 1.0 + (double) s.trustAlpha() * w[at];
                        edges += c * (1 - dot) * (1 - dot) - dot * dot;
                    }
                }
                trust = s.trustWeight() * (all + edges);
            }
        }
        if (s.coupling() == Coupling.NEIGHBOUR && s.trustWeight() > 0) {
            double[] d = new double[m * k];
            NeighbourTerm term = NeighbourTerm.of(t, s.trustWeight());
            term.residual(p, k, d);
            trust = term.value(d);
        }
        return fit + trust + s.lambda() * reg + s.biasPrior() * biasReg;
    }

    /**
     * ∂L/∂θ at the model's parameters, one array per parameter block (same layout as the model's);
     * the trust-factor block is null without shared coupling and the bias blocks are zero without
     * biases. Each row's gradient is 2(A x − c) with the A and c the solver assembles for that row,
     * so a check of this gradient is a check of the solver's equations.
     */
    public static Gradient gradient(TrainingData data, FittedModel model) {
        FitSettings s = model.settings();
        RatingMatrix r = data.ratings();
        TrustGraph t = data.trust();
        requireShape(r, model);
        int k = model.rank();
        int m = r.numUsers();
        int n = r.numItems();
        boolean biases = s.biases();
        boolean shared = s.sharesFactors();
        float[] p = model.userFactors();
        float[] z = model.trustFactors();
        int dim = biases ? k + 1 : k;
        double[] x = new double[dim];
        double[] g = new double[dim];
        FoldIn.Scratch scratch = new FoldIn.Scratch(k);

        double[] gp = new double[m * k];
        double[] gbu = new double[m];
        FoldIn users = new FoldIn(k, biases, model.globalMean(), s.lambda(), model.itemFactors(), model.itemBias(),
                shared ? z : null, shared ? NormalEquations.gram(z, m, k) : null, s.trustWeight(), s.trustAlpha())
                .withBiasPrior(s.biasPrior());
        for (int u = 0; u < m; u++) {
            users.assemble(r.userItems(), r.userValues(), r.userStart()[u], r.userStart()[u + 1], t.trustees(),
                    t.outWeights(), t.outStart()[u], t.outStart()[u + 1], scratch);
            rowGradient(scratch, dim, p, model.userBias(), u, k, biases, x, g, gp, gbu);
        }

        if (s.coupling() == Coupling.NEIGHBOUR && s.trustWeight() > 0) {
            double[] d = new double[m * k];
            NeighbourTerm term = NeighbourTerm.of(t, s.trustWeight());
            term.residual(p, k, d);
            term.addGradient(d, k, gp);
        }

        double[] gq = new double[n * k];
        double[] gbi = new double[n];
        FoldIn items = new FoldIn(k, biases, model.globalMean(), s.lambda(), p, model.userBias(), null, null, 0f, 0f)
                .withBiasPrior(s.biasPrior());
        for (int i = 0; i < n; i++) {
            items.assemble(r.itemUsers(), r.itemValues(), r.itemStart()[i], r.itemStart()[i + 1], null, null, 0, 0, scratch);
            rowGradient(scratch, dim, model.itemFactors(), model.itemBias(), i, k, biases, x, g, gq, gbi);
        }

        double[] gz = null;
        if (shared) {
            gz = new double[m * k];
            TrusteeStep trustees = new TrusteeStep(k, s.lambda(), s.trustWeight(), s.trustAlpha(), p,
                    NormalEquations.gram(p, m, k), t);
            for (int v = 0; v < m; v++) {
                trustees.assemble(v, scratch);
                rowGradient(scratch, k, z, null, v, k, false, x, g, gz, null);
            }
        }
        return new Gradient(gp, gbu, gq, gbi, gz);
    }

    private static void rowGradient(FoldIn.Scratch scratch, int dim, float[] factors, float[] bias, int row, int k,
            boolean biases, double[] x, double[] g, double[] outFactors, double[] outBias) {
        for (int a = 0; a < k; a++) {
            x[a] = factors[row * k + a];
        }
        if (biases) {
            x[k] = bias[row];
        }
        NormalEquations.gradient(scratch.a, scratch.c, dim, x, g);
        for (int a = 0; a < k; a++) {
            outFactors[row * k + a] = g[a];
        }
        if (biases) {
            outBias[row] = g[k];
        }
    }

    private static void requireShape(RatingMatrix r, FittedModel model) {
        if (r.numUsers() != model.numUsers() || r.numItems() != model.numItems()) {
            throw new IllegalArgumentException("model is " + model.numUsers() + " users × " + model.numItems()
                    + " items but the data is " + r.numUsers() + " × " + r.numItems());
        }
    }

    private static double squaredNorm(float[] f, int off, int k) {
        double s = 0;
        for (int a = 0; a < k; a++) {
            s += (double) f[off + a] * f[off + a];
        }
        return s;
    }

    private static double dot(float[] a, int offA, float[] b, int offB, int k) {
        double s = 0;
        for (int x = 0; x < k; x++) {
            s += (double) a[offA + x] * b[offB + x];
        }
        return s;
    }

    /** ∂L/∂θ by parameter block; {@code trustFactors} is null without shared coupling. */
    public record Gradient(double[] userFactors, double[] userBias, double[] itemFactors, double[] itemBias,
            double[] trustFactors) {
    }
}
