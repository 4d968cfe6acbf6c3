package dev.twofold.service.ops;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.io.IOException;

/**
 * The held-out figures of one model version, read from the metrics JSON the trainer stores with it
 * (layout in the trainer's {@code MetricsJson}). A figure that is absent, null or not a number is
 * {@link Double#NaN}; nothing here throws on a partial or empty object ({@code {}} until a version
 * is evaluated, and a failed version never is).
 *
 * @param k                     list length of precision@k ({@code 0} when unknown)
 * @param rmse                  model, all held-out ratings
 * @param precision             model precision@k, all ranked users
 * @param coverage              share of the catalogue the model's top-k lists reach
 * @param coldRmse              model, users with few training ratings
 * @param coldPrecision         model precision@k, users with few training ratings
 * @param globalMeanRmse        baseline: every prediction is μ
 * @param biasesOnlyRmse        baseline: μ + b_u + b_i
 * @param withoutTrustRmse      baseline: the same model fitted without the trust graph
 * @param mostPopularPrecision  baseline: everyone gets the most popular items
 * @param withoutTrustPrecision baseline: the same model without trust
 * @param decision              {@code promoted}, {@code rejected}, or null when not recorded
 * @param candidateRmse         RMSE the promotion decision compared (this version)
 * @param referenceRmse         RMSE of the live model it was compared against, on the same held-out data
 */
record HeldOutFigures(
        int k,
        double rmse,
        double precision,
        double coverage,
        double coldRmse,
        double coldPrecision,
        double globalMeanRmse,
        double biasesOnlyRmse,
        double withoutTrustRmse,
        double mostPopularPrecision,
        double withoutTrustPrecision,
        String decision,
        double candidateRmse,
        double referenceRmse) {

    private static final ObjectMapper JSON = new ObjectMapper();

    /** Every figure unknown. */
    static final HeldOutFigures NONE = new HeldOutFigures(0, Double.NaN, Double.NaN, Double.NaN, Double.NaN,
            Double.NaN, Double.NaN, Double.NaN, Double.NaN, Double.NaN, Double.NaN, null, Double.NaN, Double.NaN);

    /** Reads the figures from a stored metrics object; text that is not a JSON object gives {@link #NONE}. */
    static HeldOutFigures parse(String metricsJson) {
        if (metricsJson == null || metricsJson.isBlank()) {
            return NONE;
        }
        JsonNode root;
        try {
            root = JSON.readTree(metricsJson);
        } catch (IOException e) {
            return NONE;
        }
        if (root == null || !root.isObject()) {
            return NONE;
        }
        JsonNode decision = root.at("/comparison/decision");
        return new HeldOutFigures(
                root.path("k").isInt() ? root.path("k").asInt() : 0,
                number(root, "/model/overall/rmse"),
                number(root, "/model/overall/precision"),
                number(root, "/model/overall/coverage"),
                number(root, "/model/cold/rmse"),
                number(root, "/model/cold/precision"),
                number(root, "/baselines/globalMean/overall/rmse"),
                number(root, "/baselines/biasesOnly/overall/rmse"),
                number(root, "/baselines/withoutTrust/overall/rmse"),
                number(root, "/baselines/mostPopular/overall/precision"),
                number(root, "/baselines/withoutTrust/overall/precision"),
                decision.isTextual() ? decision.asText() : null,
                number(root, "/comparison/candidateRmse"),
                number(root, "/comparison/activeRmse"));
    }

    private static double number(JsonNode root, String pointer) {
        JsonNode node = root.at(pointer);
        return node.isNumber() ? node.asDouble() : Double.NaN;
    }
}
