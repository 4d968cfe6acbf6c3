package dev.twofold.trainer.fit;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Random;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;

/**
 * The two Gram kernels of the normal equations (SIMD and scalar tiles) against the plain definition
 * A[x][y] = Σ_j g_jx g_jy, for ranks that do and do not fill whole tiles, with and without a bias
 * column. The lower triangle must stay untouched: the Cholesky factorisation reads the upper one.
 */
class GramTilesTest {

    @Test
    void testsRunWithTheSimdKernel() {
        // surefire passes --add-modules jdk.incubator.vector, as the launcher does
        assertTrue(NormalEquations.SIMD, "the Vector API should be resolved in tests");
    }

    @ParameterizedTest
    @ValueSource(ints = {1, 3, 4, 8, 10, 12, 16, 32, 33, 64})
    void bothKernelsEqualTheDefinition(int k) {
        Random random = new Random(k);
        int len = 1 + random.nextInt(NormalEquations.GATHER);
        double[] g = new double[NormalEquations.GATHER * k];
        for (int i = 0; i < len * k; i++) {
            g[i] = random.nextGaussian();
        }
        for (int dim : new int[] {k, k + 1}) {
            int full = k - k % 4;
            double[] expected = new double[dim * dim];
            for (int x = 0; x < full; x++) {
                for (int y = x; y < full; y++) {
                    double s = 0;
                    for (int j = 0; j < len; j++) {
                        s += g[j * k + x] * g[j * k + y];
                    }
                    expected[x * dim + y] = 1.0 + s; // every entry starts at 1 below
                }
            }
            double[] scalar = ones(dim);
            NormalEquations.scalarUpper(scalar, dim, g, len, k, full);
            double[] simd = ones(dim);
            if (NormalEquations.SIMD) {
                VectorGram.addUpper(simd, dim, g, len, k, full);
            }
            for (int x = 0; x < dim; x++) {
                for (int y = 0; y < dim; y++) {
                    int at = x * dim + y;
                    boolean tiled = x <= y && y < full;
                    double want = tiled ? expected[at] : 1.0;
                    double tolerance = 1e-12 * Math.max(1.0, Math.abs(want)) * len;
                    assertEquals(want, scalar[at], tolerance, "scalar (" + x + "," + y + ") k=" + k + " dim=" + dim);
                    if (NormalEquations.SIMD) {
                        assertEquals(want, simd[at], tolerance, "simd (" + x + "," + y + ") k=" + k + " dim=" + dim);
                    }
                }
            }
        }
    }

    private static double[] ones(int dim) {
        double[] a = new double[dim * dim];
        java.util.Arrays.fill(a, 1.0);
        return a;
    }
}
