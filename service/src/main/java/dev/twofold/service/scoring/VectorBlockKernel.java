package dev.twofold.service.scoring;

import dev.twofold.service.model.ItemPanels;
import jdk.incubator.vector.FloatVector;
import jdk.incubator.vector.VectorOperators;
import jdk.incubator.vector.VectorSpecies;

/**
 * The SIMD {@link BlockKernel} on the Vector API ({@code jdk.incubator.vector}, 256-bit lanes: AVX2
 * on x86, two NEON registers on ARM). A panel of {@value ItemPanels#WIDTH} items is two vectors of
 * eight; four users are scored together, so each step loads two panel vectors once and does eight
 * fused multiply-adds into eight register accumulators (4 users × 2 vectors). That quarters the
 * reads of Q per user and keeps the loop bound by arithmetic, not memory.
 *
 * <p>Loading this class needs the module; {@link BlockKernels} checks before touching it.
 */
final class VectorBlockKernel implements BlockKernel {

    private static final VectorSpecies<Float> S = FloatVector.SPECIES_256;
    private static final int W = ItemPanels.WIDTH;
    private static final int L = 8;

    VectorBlockKernel() {
        if (S.length() != L || W != 2 * L) {
            throw new IllegalStateException("panel width " + W + " must be two vectors of " + S.length());
        }
    }

    @Override
    public int group() {
        return 4;
    }

    @Override
    public void dot(ItemPanels itemPanels, int fromPanel, int toPanel, float[] x, int users, float[] out) {
        float[] panels = itemPanels.data();
        int k = itemPanels.rank();
        int stride = (toPanel - fromPanel) * W;
        int u = 0;
        for (; u + 4 <= users; u += 4) {
            four(panels, k, fromPanel, toPanel, x, u, out, stride);
        }
        for (; u < users; u++) {
            one(panels, k, fromPanel, toPanel, x, u, out, stride);
        }
    }

    private static void four(float[] panels, int k, int fromPanel, int toPanel, float[] x, int u, float[] out,
            int stride) {
        int x0 = u * k;
        int x1 = x0 + k;
        int x2 = x1 + k;
        int x3 = x2 + k;
        int o0 = u * stride;
        for (int p = fromPanel; p < toPanel; p++) {
            FloatVector a0 = FloatVector.zero(S);
            FloatVector b0 = a0;
            FloatVector a1 = a0;
            FloatVector b1 = a0;
            FloatVector a2 = a0;
            FloatVector b2 = a0;
            FloatVector a3 = a0;
            FloatVector b3 = a0;
            int q = p * k * W;
            for (int f = 0; f < k; f++) {
                int row = q + f * W;
                FloatVector lo = FloatVector.fromArray(S, panels, row);
                FloatVector hi = FloatVector.fromArray(S, panels, row + L);
                FloatVector w = FloatVector.broadcast(S, x[x0 + f]);
                a0 = lo.fma(w, a0);
                b0 = hi.fma(w, b0);
                w = FloatVector.broadcast(S, x[x1 + f]);
                a1 = lo.fma(w, a1);
                b1 = hi.fma(w, b1);
                w = FloatVector.broadcast(S, x[x2 + f]);
                a2 = lo.fma(w, a2);
                b2 = hi.fma(w, b2);
                w = FloatVector.broadcast(S, x[x3 + f]);
                a3 = lo.fma(w, a3);
                b3 = hi.fma(w, b3);
            }
            int at = o0 + (p - fromPanel) * W;
            a0.intoArray(out, at);
            b0.intoArray(out, at + L);
            at += stride;
            a1.intoArray(out, at);
            b1.intoArray(out, at + L);
            at += stride;
            a2.intoArray(out, at);
            b2.intoArray(out, at + L);
            at += stride;
            a3.intoArray(out, at);
            b3.intoArray(out, at + L);
        }
    }

    /**
     * One user: four panels per step, so eight independent accumulators hide the latency of the
     * fused multiply-add (with two, a lone user would run at a quarter of the arithmetic rate).
     */
    private static void one(float[] panels, int k, int fromPanel, int toPanel, float[] x, int u, float[] out,
            int stride) {
        int x0 = u * k;
        int o0 = u * stride;
        int step = k * W;
        int p = fromPanel;
        for (; p + 4 <= toPanel; p += 4) {
            FloatVector a0 = FloatVector.zero(S);
            FloatVector b0 = a0;
            FloatVector a1 = a0;
            FloatVector b1 = a0;
            FloatVector a2 = a0;
            FloatVector b2 = a0;
            FloatVector a3 = a0;
            FloatVector b3 = a0;
            int q = p * step;
            for (int f = 0; f < k; f++) {
                int row = q + f * W;
                FloatVector w = FloatVector.broadcast(S, x[x0 + f]);
                a0 = FloatVector.fromArray(S, panels, row).fma(w, a0);
                b0 = FloatVector.fromArray(S, panels, row + L).fma(w, b0);
                a1 = FloatVector.fromArray(S, panels, row + step).fma(w, a1);
                b1 = FloatVector.fromArray(S, panels, row + step + L).fma(w, b1);
                a2 = FloatVector.fromArray(S, panels, row + 2 * step).fma(w, a2);
                b2 = FloatVector.fromArray(S, panels, row + 2 * step + L).fma(w, b2);
                a3 = FloatVector.fromArray(S, panels, row + 3 * step).fma(w, a3);
                b3 = FloatVector.fromArray(S, panels, row + 3 * step + L).fma(w, b3);
            }
            int at = o0 + (p - fromPanel) * W;
            a0.intoArray(out, at);
            b0.intoArray(out, at + L);
            a1.intoArray(out, at + W);
            b1.intoArray(out, at + W + L);
            a2.intoArray(out, at + 2 * W);
            b2.intoArray(out, at + 2 * W + L);
            a3.intoArray(out, at + 3 * W);
            b3.intoArray(out, at + 3 * W + L);
        }
        for (; p < toPanel; p++) {
            FloatVector a = FloatVector.zero(S);
            FloatVector b = a;
            int q = p * step;
            for (int f = 0; f < k; f++) {
                int row = q + f * W;
                FloatVector w = FloatVector.broadcast(S, x[x0 + f]);
                a = FloatVector.fromArray(S, panels, row).fma(w, a);
                b = FloatVector.fromArray(S, panels, row + L).fma(w, b);
            }
            int at = o0 + (p - fromPanel) * W;
            a.intoArray(out, at);
            b.intoArray(out, at + L);
        }
    }

    /**
     * Sixteen items per test: two groups of eight are compared with the threshold, the masks
     * joined, and only when some lane beats it are the items looked at one by one ({@code anyTrue}
     * is a single instruction; turning a mask into bits is not, on Java 17). Once the heap is full
     * few groups hold a candidate, so the loop is four loads, two adds, two compares, an or and a
     * test per sixteen items.
     */
    @Override
    public int above(float[] out, int offset, float[] perItem, boolean multiply, int first, int last, float threshold,
            int[] candidates) {
        int n = 0;
        int i = first;
        for (; i + 2 * L <= last; i += 2 * L) {
            FloatVector lo = FloatVector.fromArray(S, out, offset + i);
            FloatVector hi = FloatVector.fromArray(S, out, offset + i + L);
            FloatVector perLo = FloatVector.fromArray(S, perItem, i);
            FloatVector perHi = FloatVector.fromArray(S, perItem, i + L);
            FloatVector a = multiply ? lo.mul(perLo) : lo.add(perLo);
            FloatVector b = multiply ? hi.mul(perHi) : hi.add(perHi);
            if (a.compare(VectorOperators.GT, threshold).or(b.compare(VectorOperators.GT, threshold)).anyTrue()) {
                n = scalarAbove(out, offset, perItem, multiply, i, i + 2 * L, threshold, candidates, n);
            }
        }
        return scalarAbove(out, offset, perItem, multiply, i, last, threshold, candidates, n);
    }

    private static int scalarAbove(float[] out, int offset, float[] perItem, boolean multiply, int from, int to,
            float threshold, int[] candidates, int n) {
        for (int j = from; j < to; j++) {
            float score = multiply ? out[offset + j] * perItem[j] : out[offset + j] + perItem[j];
            if (score > threshold) {
                candidates[n++] = j;
            }
        }
        return n;
    }

    @Override
    public String description() {
        return "Vector API, " + S.vectorBitSize() + "-bit lanes, 4 users per pass";
    }
}
