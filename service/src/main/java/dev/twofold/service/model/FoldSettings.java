package dev.twofold.service.model;

import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.twofold.db.registry.ModelHeader;
import java.util.Locale;

/**
 * How a model was trained, as far as folding a user into it needs: the objective's coupling and
 * weights, read from its registry header.
 *
 * @param coupling    {@code shared}, {@code neighbour} or {@code none}
 * @param biases      whether the model has b_u and b_i (the {@code biases} training parameter; true when absent)
 * @param lambda      λ of the weighted-λ ridge
 * @param trustWeight τ (shared) or β (neighbour)
 * @param trustAlpha  α, confidence of an observed trust edge (shared)
 * @param biasPrior   γ, the extra γ·b² the trainer put on every bias (the {@code biasPrior} training
 *                    parameter; 0 for models trained before it existed)
 */
public record FoldSettings(String coupling, boolean biases, float lambda, float trustWeight, float trustAlpha,
        float biasPrior) {

    public static final String SHARED = "shared";
    public static final String NEIGHBOUR = "neighbour";
    public static final String NONE = "none";

    private static final ObjectMapper JSON = new ObjectMapper();

    public static FoldSettings of(ModelHeader header) {
        boolean biases = true;
        float biasPrior = 0f;
        String params = header.paramsJson();
        if (params != null && !params.isBlank()) {
            try {
                JsonNode root = JSON.readTree(params);
                JsonNode node = root.path("biases");
                biases = !node.isBoolean() || node.booleanValue();
                JsonNode prior = root.path("biasPrior");
                if (prior.isNumber() && prior.floatValue() > 0f && Float.isFinite(prior.floatValue())) {
                    biasPrior = prior.floatValue();
                }
            } catch (JsonProcessingException e) {
                throw new IllegalArgumentException("model " + header.id() + ": its parameters are not JSON ("
                        + e.getOriginalMessage() + ")", e);
            }
        }
        String coupling = header.coupling() == null ? NONE : header.coupling().toLowerCase(Locale.ROOT);
        return new FoldSettings(coupling, biases, Math.max(0f, header.lambda()), Math.max(0f, header.trustWeight()),
                Math.max(0f, header.trustAlpha()), biasPrior);
    }

    /** Whether trust enters a fold-in through the trustee factors Z (T ≈ P·Zᵀ). */
    public boolean sharesFactors() {
        return SHARED.equals(coupling);
    }

    /** Whether trust enters a fold-in as neighbour regularisation towards the trusted users' factors. */
    public boolean neighbours() {
        return NEIGHBOUR.equals(coupling);
    }
}
