package dev.twofold.trainer.fit;

/**
 * Cholesky factorisation and solve of a small symmetric positive definite system held in a reused
 * {@code double[]} (row-major n×n), so the per-row solves of a sweep allocate nothing. Only the upper
 * triangle of the input is read; it is overwritten with R where A = RᵀR. Right-looking, with the
 * inner loops running along contiguous rows. Cost n³/3 multiply-adds for the factorisation and n²
 * per solve. Checked against EJML's Cholesky in the tests.
 */
final class Cholesky {

    private Cholesky() {
    }

    /**
     * Factors A = RᵀR in place (upper triangle). Returns false, leaving A partly overwritten, when A
     * is not positive definite or holds a non-finite number.
     */
    static boolean factor(double[] a, int n) {
        for (int j = 0; j < n; j++) {
            int jj = j * n + j;
            double d = a[jj];
            if (!(d > 0 && d < Double.POSITIVE_INFINITY)) {
                return false;
            }
            double r = Math.sqrt(d);
            a[jj] = r;
            double inv = 1.0 / r;
            for (int i = j + 1; i < n; i++) {
                a[j * n + i] *= inv;
            }
            for (int i = j + 1; i < n; i++) {
                double f = a[j * n + i];
                if (f != 0) {
                    int row = i * n;
                    int src = j * n;
                    for (int l = i; l < n; l++) {
                        a[row + l] -= f * a[src + l];
                    }
                }
            }
        }
        return true;
    }

    /**
     * Solves RᵀR x = b in place ({@code b} becomes x) with R from {@link #factor}. Returns false when
     * the solution is not finite.
     */
    static boolean solve(double[] r, int n, double[] b) {
        // Rᵀ y = b, column-oriented so the inner loop runs along row i of R.
        for (int i = 0; i < n; i++) {
            double y = b[i] / r[i * n + i];
            b[i] = y;
            int row = i * n;
            for (int l = i + 1; l < n; l++) {
                b[l] -= r[row + l] * y;
            }
        }
        // R x = y.
        for (int i = n - 1; i >= 0; i--) {
            int row = i * n;
            double s = b[i];
            for (int l = i + 1; l < n; l++) {
                s -= r[row + l] * b[l];
            }
            b[i] = s / r[row + i];
        }
        for (int i = 0; i < n; i++) {
            if (!Double.isFinite(b[i])) {
                return false;
            }
        }
        return true;
    }
}
