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

    /**
     * Adds the ratings of one row against a fixed other side F (rows of length k) with biases B:
     * A += Σ f̃ f̃ᵀ, c += Σ (r − μ − B[j]) f̃, where f̃ = (f_j, 1) with biases and f_j without.
     * {@code row} is scratch of length ≥ k + 1. Cost (to − from)·K²/2.
     */
    static void addRatings(double[] a, double[] c, double[] row, int k, boolean biases, float mu, float[] fixed,
            float[] fixedBias, int[] index, float[] value, int from, int to) {
        int dim = biases ? k + 1 : k;
        for (int at = from; at < to; at++) {
            int j = index[at];
            int off = j * k;
            for (int x = 0; x < k; x++) {
                row[x] = fixed[off + x];
            }
            double target = value[at];
            if (biases) {
                row[k] = 1.0;
                target -= (double) mu + fixedBias[j];
            }
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
