package dev.twofold.trainer.fit;

import java.util.Arrays;

/**
 * Assembles the normal equations A x = c of one row's least-squares problem in reused buffers: A is
 * K×K row-major with only the upper triangle accumulated (what {@link Cholesky} reads), c has length
 * K. For a row with a bias, K = k + 1 and the bias is coordinate k. Shared by the solver, the fold-in
 * and the objective's gradient, so all three use the same equations.
 */
final class NormalEquations {

    private NormalEquations() {
    }

    static void clear(double[] a, double[] c, int dim) {
        Arrays.fill(a, 0, dim * dim, 0.0);
        Arrays.fill(c, 0, dim, 0.0);
    }

    /** Ratings gathered at a time by {@link #addRatings}. */
    static final int GATHER = 256;

    /** Whether the Gram tiles run on the SIMD kernel ({@link VectorGram}) in this JVM. */
    static final boolean SIMD = simdAvailable();

    private static boolean simdAvailable() {
        if (ModuleLayer.boot().findModule("jdk.incubator.vector").isEmpty()) {
            return false;
        }
        try {
            return VectorGram.usable();
        } catch (LinkageError e) {
            return false;
        }
    }

    /**
     * Adds the ratings of one row against a fixed other side F (rows of length k) with biases B:
     * A += Σ f̃ f̃ᵀ, c += Σ (r − μ − B[j]) f̃, where f̃ = (f_j, 1) with biases and f_j without. Up to
     * {@value #GATHER} ratings at a time are gathered as doubles into {@code g} (row-major, rating j's
     * factor x at g[j·k + x]) with their targets in {@code t}; the upper triangle of the k×k factor
     * block is then summed over the gathered ratings in register tiles ({@link VectorGram} when the
     * JVM has the Vector API, else 4×4 scalar tiles), so A is loaded and stored once per tile and
     * gather. The bias row (f̃ = (f, 1)) is Σ f and the count. Every entry sums its ratings in rating
     * order within fixed-size gathers, so results do not depend on threads. {@code g} holds ≥
     * GATHER·k, {@code t} ≥ GATHER. Cost (to − from)·k²/2 multiply-adds.
     */
    static void addRatings(double[] a, double[] c, double[] g, double[] t, int k, boolean biases, float mu,
            float[] fixed, float[] fixedBias, int[] index, float[] value, int from, int to) {
        int dim = biases ? k + 1 : k;
        int full = k - k % 4;
        for (int start = from; start < to; start += GATHER) {
            int len = Math.min(GATHER, to - start);
            for (int j = 0, at = 0; j < len; j++, at += k) {
                int idx = index[start + j];
                int src = idx * k;
                double tj = biases ? value[start + j] - ((double) mu + fixedBias[idx]) : value[start + j];
                t[j] = tj;
                for (int x = 0; x < k; x++) {
                    double f = fixed[src + x];
                    g[at + x] = f;
                    c[x] += tj * f;
                }
                if (biases) {
                    for (int x = 0; x < k; x++) {
                        a[x * dim + k] += g[at + x];
                    }
                    c[k] += tj;
                }
            }
            if (biases) {
                a[k * dim + k] += len;
            }
            addGram(a, dim, g, len, k, full);
        }
    }

    /**
     * A[x][y] += Σ_j g[j·k + x]·g[j·k + y] over the upper triangle of the k×k factor block, for
     * {@code len} gathered rows: the tiles on the SIMD or scalar kernel, then the rows and columns
     * past the last full tile.
     */
    private static void addGram(double[] a, int dim, double[] g, int len, int k, int full) {
        if (SIMD) {
            VectorGram.addUpper(a, dim, g, len, k, full);
        } else {
            scalarUpper(a, dim, g, len, k, full);
        }
        for (int x = 0; x < k; x++) {
            for (int y = Math.max(x, full); y < k; y++) {
                double s = 0;
                for (int j = 0, at = 0; j < len; j++, at += k) {
                    s += g[at + x] * g[at + y];
                }
                a[x * dim + y] += s;
            }
        }
    }

    /** The scalar Gram tiles: 4×4 blocks of the upper triangle in 16 accumulators each. */
    static void scalarUpper(double[] a, int dim, double[] g, int len, int k, int full) {
        for (int x0 = 0; x0 < full; x0 += 4) {
            for (int y0 = x0; y0 < full; y0 += 4) {
                double s00 = 0, s01 = 0, s02 = 0, s03 = 0;
                double s10 = 0, s11 = 0, s12 = 0, s13 = 0;
                double s20 = 0, s21 = 0, s22 = 0, s23 = 0;
                double s30 = 0, s31 = 0, s32 = 0, s33 = 0;
                for (int j = 0, at = 0; j < len; j++, at += k) {
                    double a0 = g[at + x0];
                    double a1 = g[at + x0 + 1];
                    double a2 = g[at + x0 + 2];
                    double a3 = g[at + x0 + 3];
                    double b0 = g[at + y0];
                    double b1 = g[at + y0 + 1];
                    double b2 = g[at + y0 + 2];
                    double b3 = g[at + y0 + 3];
                    s00 += a0 * b0;
                    s01 += a0 * b1;
                    s02 += a0 * b2;
                    s03 += a0 * b3;
                    s10 += a1 * b0;
                    s11 += a1 * b1;
                    s12 += a1 * b2;
                    s13 += a1 * b3;
                    s20 += a2 * b0;
                    s21 += a2 * b1;
                    s22 += a2 * b2;
                    s23 += a2 * b3;
                    s30 += a3 * b0;
                    s31 += a3 * b1;
                    s32 += a3 * b2;
                    s33 += a3 * b3;
                }
                int a0i = x0 * dim + y0;
                int a1i = a0i + dim;
                int a2i = a1i + dim;
                int a3i = a2i + dim;
                a[a0i] += s00;
                a[a0i + 1] += s01;
                a[a0i + 2] += s02;
                a[a0i + 3] += s03;
                a[a1i + 1] += s11;
                a[a1i + 2] += s12;
                a[a1i + 3] += s13;
                a[a2i + 2] += s22;
                a[a2i + 3] += s23;
                a[a3i + 3] += s33;
                if (y0 != x0) {
                    a[a1i] += s10;
                    a[a2i] += s20;
                    a[a2i + 1] += s21;
                    a[a3i] += s30;
                    a[a3i + 1] += s31;
                    a[a3i + 2] += s32;
                }
            }
        }
    }

    /**
     * Adds the trust side of a row under shared factors: A[0..k,0..k] += τ (G + Σ α w_j z_j z_jᵀ) and
     * c[0..k] += τ Σ (1 + α w_j) z_j, where G is the Gram matrix of all rows of Z (k×k, full) and the
     * sums run over the row's observed edges. The edge terms go through the same Gram tiles as the
     * ratings, each z_j gathered into {@code g} scaled by √(τ α w_j) (weights are ≥ 0). Cost k²/2 +
     * |edges|·k²/2.
     */
    static void addTrust(double[] a, double[] c, double[] g, int k, int dim, float tau, float alpha, float[] z,
            double[] gram, int[] index, float[] weight, int from, int to) {
        for (int x = 0; x < k; x++) {
            int ax = x * dim;
            int gx = x * k;
            for (int y = x; y < k; y++) {
                a[ax + y] += tau * gram[gx + y];
            }
        }
        int full = k - k % 4;
        for (int start = from; start < to; start += GATHER) {
            int len = Math.min(GATHER, to - start);
            for (int j = 0, at = 0; j < len; j++, at += k) {
                int off = index[start + j] * k;
                double w = weight[start + j];
                double scale = Math.sqrt((double) tau * alpha * w);
                double pull = (double) tau * (1.0 + (double) alpha * w);
                for (int x = 0; x < k; x++) {
                    double zx = z[off + x];
                    c[x] += pull * zx;
                    g[at + x] = scale * zx;
                }
            }
            addGram(a, dim, g, len, k, full);
        }
    }

    /**
     * Adds the neighbour term of one row: A[0..k,0..k] += β c I and c[0..k] += β pull (see
     * {@link NeighbourTerm#pull}). Cost k.
     */
    static void addNeighbour(double[] a, double[] c, int k, int dim, double beta, double curvature, double[] pull) {
        for (int x = 0; x < k; x++) {
            a[x * dim + x] += beta * curvature;
            c[x] += beta * pull[x];
        }
    }

    /** A += amount · I on the first {@code dim} coordinates. */
    static void addRidge(double[] a, int dim, double amount) {
        for (int x = 0; x < dim; x++) {
            a[x * dim + x] += amount;
        }
    }

    /** out = 2(A x − c) with A symmetric, given by its upper triangle: the gradient of xᵀAx − 2cᵀx + const. */
    static void gradient(double[] a, double[] c, int dim, double[] x, double[] out) {
        for (int i = 0; i < dim; i++) {
            double s = 0;
            for (int j = 0; j < dim; j++) {
                double aij = i <= j ? a[i * dim + j] : a[j * dim + i];
                s += aij * x[j];
            }
            out[i] = 2 * (s - c[i]);
        }
    }

    /**
     * The Gram matrix FᵀF (k×k, full, row-major) of the first {@code rows} rows of F, summed in row
     * order so the result does not depend on threads. Cost rows·k²/2.
     */
    static double[] gram(float[] f, int rows, int k) {
        double[] g = new double[k * k];
        double[] row = new double[k];
        for (int r = 0, off = 0; r < rows; r++, off += k) {
            for (int x = 0; x < k; x++) {
                row[x] = f[off + x];
            }
            for (int x = 0; x < k; x++) {
                double rx = row[x];
                if (rx == 0) {
                    continue;
                }
                int gx = x * k;
                for (int y = x; y < k; y++) {
                    g[gx + y] += rx * row[y];
                }
            }
        }
        for (int x = 0; x < k; x++) {
            for (int y = 0; y < x; y++) {
                g[x * k + y] = g[y * k + x];
            }
        }
        return g;
    }
}
