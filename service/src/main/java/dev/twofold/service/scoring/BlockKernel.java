package dev.twofold.service.scoring;

import dev.twofold.service.model.ItemPanels;

/**
 * Inner products of a few query vectors with a run of item panels ({@link
 * dev.twofold.service.model.ItemPanels}): the one hot loop of ranking. For users {@code u < users}
 * and items j of panels {@code fromPanel ≤ p < toPanel}:
 *
 * <pre>
 *   out[u·S + (p − fromPanel)·W + j] = Σ_f x[u·k + f] · q_{p·W + j, f}      (S = (toPanel − fromPanel)·W)
 * </pre>
 *
 * and 0 for the padding items past the last. Cost: users·(toPanel − fromPanel)·W·k multiply-adds,
 * reading Q once for every group of users an implementation scores together. Implementations are
 * stateless and thread-safe.
 */
interface BlockKernel {

    void dot(ItemPanels panels, int fromPanel, int toPanel, float[] x, int users, float[] out);

    /**
     * How many users one pass of the kernel scores together at best: a caller with a few more
     * users than a multiple of this may do better to pad the batch with zero vectors up to the
     * next multiple (see {@link ScoringEngine}) than to have the rest scored one by one.
     */
    default int group() {
        return 1;
    }

    /**
     * The items whose score beats a threshold: every i in {@code [first, last)} with
     * {@code s_i > threshold}, where s_i = {@code out[offset + i] + perItem[i]}, or
     * {@code out[offset + i] · perItem[i]} when {@code multiply}, written to {@code candidates} in
     * increasing order; returns how many. {@code first} is a multiple of the panel width.
     */
    int above(float[] out, int offset, float[] perItem, boolean multiply, int first, int last, float threshold,
            int[] candidates);

    /** What the kernel runs on, for the start-up log and the benchmark. */
    String description();
}
