package dev.twofold.db.registry;

import java.time.Instant;

/**
 * One row of the model registry without its factors.
 *
 * @param id          model version id, increasing
 * @param status      {@code training}, {@code candidate}, {@code active}, {@code rejected}, {@code failed}, {@code retired}
 * @param rank        factor rank k
 * @param coupling    how trust was coupled: {@code shared}, {@code neighbour} or {@code none}
 * @param lambda      weighted-λ regularisation used in training (the service reuses it for fold-in)
 * @param trustWeight weight of the trust term (τ for shared factors, β for neighbour regularisation)
 * @param trustAlpha  confidence α of an observed trust edge (weight 1+α·w) for shared factors
 * @param scaleMin    lowest rating on the scale; predictions are clamped to it
 * @param scaleMax    highest rating on the scale
 * @param globalMean  μ
 * @param numUsers    user index space at training time (user indices are {@code 0..numUsers-1})
 * @param numItems    item index space at training time
 * @param paramsJson  all training parameters as a JSON object
 * @param metricsJson held-out metrics and baselines as a JSON object ({@code {}} until evaluated)
 * @param countsJson  data counts as a JSON object
 * @param reason      why the model has its status (rejection or failure reason), or null
 */
public record ModelHeader(
        long id,
        String status,
        int rank,
        String coupling,
        float lambda,
        float trustWeight,
        float trustAlpha,
        float scaleMin,
        float scaleMax,
        float globalMean,
        int numUsers,
        int numItems,
        Instant createdAt,
        Instant finishedAt,
        String paramsJson,
        String metricsJson,
        String countsJson,
        String reason) {
}
