package dev.twofold.trainer.evaluate;

/**
 * What simpler scorers achieve on the same held-out rows, so a report shows what the model buys.
 *
 * @param globalMean   μ for every pair (errors only)
 * @param biasesOnly   μ + b_u + b_i fitted with the same regularised closed form (errors and ranking)
 * @param mostPopular  items ranked by how many training ratings reached the relevance threshold (ranking only)
 * @param withoutTrust the same model fitted without trust coupling, or null when the model has none
 */
public record BaselineFigures(SegmentFigures globalMean, SegmentFigures biasesOnly, SegmentFigures mostPopular,
        SegmentFigures withoutTrust) {
}
