package dev.twofold.trainer.fit;

import static org.junit.jupiter.api.Assertions.assertEquals;

import dev.twofold.trainer.data.RatingMatrix;
import java.util.Arrays;
import java.util.Random;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.SingularOps_DDRM;
import org.junit.jupiter.api.Test;

/**
 * On a fully observed matrix with λ = 0, no biases and no trust, the objective is ‖X − PQᵀ‖²_F, whose
 * minimum over rank-k factors is Σ_{j>k} σ_j² (Eckart–Young); ALS from a random start reaches it.
 */
class LowRankOptimumTest {

    /**
     * The user–item matrix of Example 9.3 in R. Zafarani, M. A. Abbasi, H. Liu, <i>Social Media
     * Mining: An Introduction</i>, Cambridge University Press, 2014, and its singular values as
     * printed there (both from memory; the test checks them against EJML's SVD).
     */
    private static final double[][] BOOK_MATRIX = {
        {3, 0, 3},
        {5, 4, 0},
        {1, 2, 4},
        {2, 2, 0},
    };
    private static final double[] BOOK_SINGULAR_VALUES = {8.0265, 4.3886, 2.0777};
    /** The book prints four decimals. */
    private static final double BOOK_PRINT_PRECISION = 0.5e-4;

    /** Factors are stored as float32, so the residual norm is good to about 1e-6 relative; allow 1e-4. */
    private static final double OPTIMUM_TOLERANCE = 1e-4;
    private static final int EPOCHS = 200;

    @Test
    void remembered_example_matrix_has_the_printed_singular_values() {
        double[] sv = singularValuesDescending(BOOK_MATRIX);
        for (int j = 0; j < BOOK_SINGULAR_VALUES.length; j++) {
            assertEquals(BOOK_SINGULAR_VALUES[j], sv[j], BOOK_PRINT_PRECISION, "σ" + (j + 1));
        }
    }

    @Test
    void rank_two_fit_of_the_book_example_reaches_the_eckart_young_optimum() {
        // ‖X − X_2‖_F = σ_3 = 2.0777 (book value), computed here from EJML's SVD.
        assertReachesOptimum(BOOK_MATRIX, 2, 3);
        assertReachesOptimum(BOOK_MATRIX, 1, 4);
    }

    @Test
    void rank_three_fit_of_a_noisy_low_rank_matrix_reaches_the_eckart_young_optimum() {
        Random random = new Random(11);
        int m = 40;
        int n = 25;
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
        assertReachesOptimum(x, 3, 5);
    }

    private static void assertReachesOptimum(double[][] x, int rank, long seed) {
        int m = x.length;
        int n = x[0].length;
        int[] u = new int[m * n];
        int[] i = new int[m * n];
        float[] v = new float[m * n];
        for (int a = 0, at = 0; a < m; a++) {
            for (int b = 0; b < n; b++, at++) {
                u[at] = a;
                i[at] = b;
                v[at] = (float) x[a][b];
            }
        }
        float[][] stored = new float[m][n];
        for (int a = 0; a < m; a++) {
            for (int b = 0; b < n; b++) {
                stored[a][b] = (float) x[a][b];
            }
        }
        double[] sv = singularValuesDescending(toDouble(stored));
        double optimum = 0;
        for (int j = rank; j < sv.length; j++) {
            optimum += sv[j] * sv[j];
        }
        optimum = Math.sqrt(optimum);

        FitSettings settings = FitSettings.defaults().withRank(rank).withLambda(0f).withBiases(false)
                .withCoupling(Coupling.NONE).withEpochs(EPOCHS).withSeed(seed);
        FittedModel model = new AlsSolver().fit(TrainingData.of(RatingMatrix.of(m, n, u, i, v)), settings);

        double residual = 0;
        for (int a = 0; a < m; a++) {
            for (int b = 0; b < n; b++) {
                double e = stored[a][b] - model.score(a, b);
                residual += e * e;
            }
        }
        assertEquals(optimum, Math.sqrt(residual), OPTIMUM_TOLERANCE * optimum, "rank " + rank + " residual");
    }

    private static double[][] toDouble(float[][] f) {
        double[][] d = new double[f.length][];
        for (int a = 0; a < f.length; a++) {
            d[a] = new double[f[a].length];
            for (int b = 0; b < f[a].length; b++) {
                d[a][b] = f[a][b];
            }
        }
        return d;
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
