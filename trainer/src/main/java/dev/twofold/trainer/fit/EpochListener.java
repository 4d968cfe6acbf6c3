package dev.twofold.trainer.fit;

/** Called after every epoch of a fit, on the fitting thread. */
@FunctionalInterface
public interface EpochListener {

    EpochListener NONE = report -> { };

    void onEpoch(EpochReport report);
}
