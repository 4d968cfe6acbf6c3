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

    /** Ratings handled together in {@link #addRatings}: each load and store of A serves this many updates. */
    static final int BLOCK = 4;

    /**
     * Adds the ratings of one row against a fixed other side F (rows of length k) with biases B:
     * A += Σ f̃ f̃ᵀ, c += Σ (r − μ − B[j]) f̃, where f̃ = (f_j, 1) with biases and f_j without.
     * Ratings are taken {@value #BLOCK} at a time so each pass over A applies four rank-one updates
     * (a fixed order of summation, so results do not depend on threads). {@code row} is scratch of
     * length ≥ {@value #BLOCK}·(k + 1). Cost (to − from)·K²/2.
     */
    static void addRatings(double[] a, double[] c, double[] row, int k, boolean biases, float mu, float[] fixed,
            float[] fixedBias, int[] index, float[] value, int from, int to) {
        int dim = biases ? k + 1 : k;
        int at = from;
        int d1 = dim;
        int d2 = 2 * dim;
        int d3 = 3 * dim;
        for (; at + BLOCK <= to; at += BLOCK) {
            double t0 = load(row, 0, k, biases, mu, fixed, fixedBias, index[at], value[at]);
            double t1 = load(row, d1, k, biases, mu, fixed, fixedBias, index[at + 1], value[at + 1]);
            double t2 = load(row, d2, k, biases, mu, fixed, fixedBias, index[at + 2], value[at + 2]);
            double t3 = load(row, d3, k, biases, mu, fixed, fixedBias, index[at + 3], value[at + 3]);
            for (int x = 0; x < dim; x++) {
                double x0 = row[x];
                double x1 = row[d1 + x];
                double x2 = row[d2 + x];
                double x3 = row[d3 + x];
                c[x] += t0 * x0 + t1 * x1 + t2 * x2 + t3 * x3;
                int ax = x * dim;
                for (int y = x; y < dim; y++) {
                    a[ax + y] += x0 * row[y] + x1 * row[d1 + y] + x2 * row[d2 + y] + x3 * row[d3 + y];
                }
            }
        }
        for (; at < to; at++) {
            double target = load(row, 0, k, biases, mu, fixed, fixedBias, index[at], value[at]);
            for (int x = 0; x < dim; x++) {
                double rx = row[x];
                c[x] += target * rx;
                int ax = x * dim;
                for (int y = x; y < dim; y++) {
                    a[ax + y] += rx * row[y];
                }
            }
        }
    }

    /** Copies f̃_j into row[off..off+K) and returns the target r − μ − B[j] (or r without biases). */
    private static double load(double[] row, int off, int k, boolean biases, float mu, float[] fixed, float[] fixedBias,
            int j, float value) {
        int src = j * k;
        for (int x = 0; x < k; x++) {
            row[off + x] = fixed[src + x];
        }
        if (biases) {
            row[off + k] = 1.0;
            return value - ((double) mu + fixedBias[j]);
        }
        return value;
    }

    /**
     * Adds the trust side of a row under shared factors: A[0..k,0..k] += τ (G + Σ α w_j z_j z_jᵀ) and
     * c[0..k] += τ Σ (1 + α w_j) z_j, where G is the Gram matrix of all rows of Z (k×k, full) and the
     * sums run over the row's observed edges. Cost k²/2 + |edges|·k²/2.
     */
    static void addTrust(double[] a, double[] c, double[] row, int k, int dim, float tau, float alpha, float[] z,
            double[] gram, int[] index, float[] weight, int from, int to) {
        for (int x = 0; x < k; x++) {
            int ax = x * dim;
            int gx = x * k;
            for (int y = x; y < k; y++) {
                a[ax + y] += tau * gram[gx + y];
            }
        }
        for (int at = from; at < to; at++) {
            int j = index[at];
            int off = j * k;
            double w = weight[at];
            double extra = (double) tau * alpha * w;
            double pull = (double) tau * (1.0 + (double) alpha * w);
            for (int x = 0; x < k; x++) {
                row[x] = z[off + x];
            }
            for (int x = 0; x < k; x++) {
                double rx = row[x];
                c[x] += pull * rx;
                double erx = extra * rx;
                int ax = x * dim;
                for (int y = x; y < k; y++) {
                    a[ax + y] += erx * row[y];
                }
            }
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
