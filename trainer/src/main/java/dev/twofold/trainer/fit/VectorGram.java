package dev.twofold.trainer.fit;

import jdk.incubator.vector.DoubleVector;
import jdk.incubator.vector.VectorMask;
import jdk.incubator.vector.VectorSpecies;

/**
 * The SIMD Gram kernel of {@link NormalEquations#addRatings}: A[x][y] += Σ_j g[j·k + x]·g[j·k + y]
 * for x ≤ y < full (full = k rounded down to a multiple of four), over gathered rows g in row-major
 * order. Runs on the Vector API ({@code jdk.incubator.vector}) with 256-bit lanes of four doubles:
 * a tile of four rows of A by eight columns lives in eight vector registers while the gathered
 * ratings stream past, so each rating costs two vector loads and four broadcasts for eight fused
 * multiply-adds, and A is read and written once per tile and gather.
 *
 * <p>Each entry still sums its ratings one at a time in rating order (a lane holds one column), so
 * results depend on the data alone, never on threads. Loading this class needs the module; {@link
 * NormalEquations} checks before touching it.
 */
final class VectorGram {

    private static final VectorSpecies<Double> S = DoubleVector.SPECIES_256;
    private static final int L = 4;
    /** Lanes 1–3, 2–3 and 3 alone: the upper triangle of rows 1, 2 and 3 of a diagonal block. */
    private static final VectorMask<Double> FROM_1 = VectorMask.fromLong(S, 0b1110);
    private static final VectorMask<Double> FROM_2 = VectorMask.fromLong(S, 0b1100);
    private static final VectorMask<Double> FROM_3 = VectorMask.fromLong(S, 0b1000);

    private VectorGram() {
    }

    /** True when the module is resolved and 256-bit lanes are native here. */
    static boolean usable() {
        return S.length() == L && DoubleVector.SPECIES_PREFERRED.vectorBitSize() >= 256;
    }

    static void addUpper(double[] a, int dim, double[] g, int len, int k, int full) {
        for (int x0 = 0; x0 < full; x0 += 4) {
            int y0 = x0;
            for (; y0 + 2 * L <= full; y0 += 2 * L) {
                rows4cols8(a, dim, g, len, k, x0, y0);
            }
            if (y0 < full) {
                rows4cols4(a, dim, g, len, k, x0, y0);
            }
        }
    }

    private static void rows4cols8(double[] a, int dim, double[] g, int len, int k, int x0, int y0) {
        DoubleVector s0 = DoubleVector.zero(S);
        DoubleVector t0 = s0;
        DoubleVector s1 = s0;
        DoubleVector t1 = s0;
        DoubleVector s2 = s0;
        DoubleVector t2 = s0;
        DoubleVector s3 = s0;
        DoubleVector t3 = s0;
        for (int j = 0, base = 0; j < len; j++, base += k) {
            DoubleVector lo = DoubleVector.fromArray(S, g, base + y0);
            DoubleVector hi = DoubleVector.fromArray(S, g, base + y0 + L);
            DoubleVector w = DoubleVector.broadcast(S, g[base + x0]);
            s0 = lo.fma(w, s0);
            t0 = hi.fma(w, t0);
            w = DoubleVector.broadcast(S, g[base + x0 + 1]);
            s1 = lo.fma(w, s1);
            t1 = hi.fma(w, t1);
            w = DoubleVector.broadcast(S, g[base + x0 + 2]);
            s2 = lo.fma(w, s2);
            t2 = hi.fma(w, t2);
            w = DoubleVector.broadcast(S, g[base + x0 + 3]);
            s3 = lo.fma(w, s3);
            t3 = hi.fma(w, t3);
        }
        store(a, dim, x0, y0, s0, s1, s2, s3);
        store(a, dim, x0, y0 + L, t0, t1, t2, t3);
    }

    private static void rows4cols4(double[] a, int dim, double[] g, int len, int k, int x0, int y0) {
        DoubleVector s0 = DoubleVector.zero(S);
        DoubleVector s1 = s0;
        DoubleVector s2 = s0;
        DoubleVector s3 = s0;
        for (int j = 0, base = 0; j < len; j++, base += k) {
            DoubleVector lo = DoubleVector.fromArray(S, g, base + y0);
            s0 = lo.fma(DoubleVector.broadcast(S, g[base + x0]), s0);
            s1 = lo.fma(DoubleVector.broadcast(S, g[base + x0 + 1]), s1);
            s2 = lo.fma(DoubleVector.broadcast(S, g[base + x0 + 2]), s2);
            s3 = lo.fma(DoubleVector.broadcast(S, g[base + x0 + 3]), s3);
        }
        store(a, dim, x0, y0, s0, s1, s2, s3);
    }

    /** Adds a 4×4 block at rows x0.., columns y0..; on the diagonal only its upper triangle. */
    private static void store(double[] a, int dim, int x0, int y0, DoubleVector r0, DoubleVector r1,
            DoubleVector r2, DoubleVector r3) {
        if (y0 >= x0 + L) {
            add(a, x0 * dim + y0, r0);
            add(a, (x0 + 1) * dim + y0, r1);
            add(a, (x0 + 2) * dim + y0, r2);
            add(a, (x0 + 3) * dim + y0, r3);
            return;
        }
        add(a, x0 * dim + y0, r0);
        add(a, (x0 + 1) * dim + y0, r1, FROM_1);
        add(a, (x0 + 2) * dim + y0, r2, FROM_2);
        add(a, (x0 + 3) * dim + y0, r3, FROM_3);
    }

    private static void add(double[] a, int at, DoubleVector v, VectorMask<Double> lanes) {
        DoubleVector.fromArray(S, a, at).add(v, lanes).intoArray(a, at);
    }

    private static void add(double[] a, int at, DoubleVector v) {
        DoubleVector.fromArray(S, a, at).add(v).intoArray(a, at);
    }
}
