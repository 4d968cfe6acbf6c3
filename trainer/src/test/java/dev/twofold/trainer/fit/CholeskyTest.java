package dev.twofold.trainer.fit;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Random;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.factory.LinearSolverFactory_DDRM;
import org.ejml.interfaces.linsol.LinearSolverDense;
import org.junit.jupiter.api.Test;

class CholeskyTest {

    /** Both solvers work in double precision on well-conditioned systems. */
    private static final double AGREEMENT = 1e-10;

    @Test
    void solves_symmetric_positive_definite_systems_like_ejml() {
        Random random = new Random(7);
        for (int n = 1; n <= 33; n += 4) {
            double[] m = new double[n * n];
            for (int x = 0; x < m.length; x++) {
                m[x] = random.nextGaussian();
            }
            double[] a = new double[n * n];
            for (int i = 0; i < n; i++) {
                for (int j = 0; j < n; j++) {
                    double s = i == j ? n : 0;
                    for (int l = 0; l < n; l++) {
                        s += m[i * n + l] * m[j * n + l];
                    }
                    a[i * n + j] = s;
                }
            }
            double[] b = new double[n];
            for (int i = 0; i < n; i++) {
                b[i] = random.nextGaussian();
            }

            LinearSolverDense<DMatrixRMaj> reference = LinearSolverFactory_DDRM.chol(n);
            assertTrue(reference.setA(new DMatrixRMaj(n, n, true, a.clone())));
            DMatrixRMaj expected = new DMatrixRMaj(n, 1);
            reference.solve(new DMatrixRMaj(n, 1, true, b.clone()), expected);

            double[] work = a.clone();
            for (int i = 1; i < n; i++) {
                for (int j = 0; j < i; j++) {
                    work[i * n + j] = Double.NaN; // only the upper triangle may be read
                }
            }
            double[] x = b.clone();
            assertTrue(Cholesky.factor(work, n), "factor n=" + n);
            assertTrue(Cholesky.solve(work, n, x), "solve n=" + n);
            for (int i = 0; i < n; i++) {
                assertEquals(expected.get(i, 0), x[i], AGREEMENT * (1 + Math.abs(expected.get(i, 0))), "n=" + n + " x" + i);
            }
        }
    }

    @Test
    void reports_an_indefinite_matrix_instead_of_throwing() {
        double[] a = {1, 2, 2, 1}; // eigenvalues 3 and -1
        assertFalse(Cholesky.factor(a, 2));
    }

    @Test
    void reports_a_singular_matrix_and_non_finite_entries() {
        assertFalse(Cholesky.factor(new double[] {1, 1, 1, 1}, 2));
        assertFalse(Cholesky.factor(new double[] {Double.NaN, 0, 0, 1}, 2));
        assertFalse(Cholesky.factor(new double[] {Double.POSITIVE_INFINITY, 0, 0, 1}, 2));
    }
}
