package dev.twofold.trainer.fit;

import static org.junit.jupiter.api.Assertions.assertEquals;

import java.util.Arrays;
import java.util.Random;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.SingularOps_DDRM;
import org.junit.jupiter.api.Test;

/**
 * On a fully observed matrix with λ = 0, no biases and no trust, the objective is ‖X − PQᵀ‖²_F, whose
 * minimum over rank-k factors is Σ_{j>k} σ_j² (Eckart–Young). The references the solver contract
 * checks against ({@link SolverContractTest}), and the check that the remembered book example is right.
 */
class LowRankOptimumTest {

    /**
     * The user–item matrix of Example 9.3 in R. Zafarani, M. A. Abbasi, H. Liu, <i>Social Media
     * Mining: An Introduction</i>, Cambridge University Press, 2014, and its singular values as
     * printed there (both from memory; the test checks them against EJML's SVD).
     */
    static final double[][] BOOK_MATRIX = {
        {3, 0, 3},
        {5, 4, 0},
        {1, 2, 4},
        {2, 2, 0},
    };
    private static final double[] BOOK_SINGULAR_VALUES = {8.0265, 4.3886, 2.0777};
    /** The book prints four decimals. */
    private static final double BOOK_PRINT_PRECISION = 0.5e-4;

    @Test
    void remembered_example_matrix_has_the_printed_singular_values() {
        double[] sv = singularValuesDescending(BOOK_MATRIX);
        for (int j = 0; j < BOOK_SINGULAR_VALUES.length; j++) {
            assertEquals(BOOK_SINGULAR_VALUES[j], sv[j], BOOK_PRINT_PRECISION, "σ" + (j + 1));
        }
    }

    /** A 3-factor matrix with strengths 9, 6, 4 plus Gaussian noise of sd 0.3 (invented, seeded). */
    static double[][] noisyLowRank(int m, int n, long seed) {
        Random random = new Random(seed);
        double[][] x = new double[m][n];
        double[] strength = {9, 6, 4};
        double[][] a = new double[m][3];
        double[][] b = new double[n][3];
        for (double[] row : a) {
            for (int c = 0; c < 3; c++) {
                row[c] = random.nextGaussian();
            }
        }
        for (double[] row : b) {
            for (int c = 0; c < 3; c++) {
                row[c] = random.nextGaussian();
            }
        }
        for (int i = 0; i < m; i++) {
            for (int j = 0; j < n; j++) {
                double s = 0.3 * random.nextGaussian();
                for (int c = 0; c < 3; c++) {
                    s += strength[c] * a[i][c] * b[j][c];
                }
                x[i][j] = s;
            }
        }
        return x;
    }

    /** ‖X − X_k‖_F = √(Σ_{j>k} σ_j²) from EJML's singular values. */
    static double eckartYoung(double[][] x, int rank) {
        double[] sv = singularValuesDescending(x);
        double optimum = 0;
        for (int j = rank; j < sv.length; j++) {
            optimum += sv[j] * sv[j];
        }
        return Math.sqrt(optimum);
    }

    private static double[] singularValuesDescending(double[][] x) {
        double[] sv = SingularOps_DDRM.singularValues(new DMatrixRMaj(x));
        Arrays.sort(sv);
        for (int l = 0, r = sv.length - 1; l < r; l++, r--) {
            double t = sv[l];
            sv[l] = sv[r];
            sv[r] = t;
        }
        return sv;
    }
}
