package dev.twofold.trainer.fit;

/**
 * A method that fits the model r̂(u,i) = μ + b_u + b_i + p_u·q_i (with the trust coupling the
 * settings ask for) to training data. Every solver satisfies the same checks: the objective does
 * not increase between epochs, and the result is the same for a seed whatever the thread count.
 */
public interface Solver {

    FittedModel fit(TrainingData data, FitSettings settings, EpochListener listener);

    default FittedModel fit(TrainingData data, FitSettings settings) {
        return fit(data, settings, EpochListener.NONE);
    }
}
