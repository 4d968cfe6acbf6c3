package dev.twofold.trainer.split;

import java.util.Locale;

/** How held-out ratings are chosen ({@code --split}). */
public enum SplitMethod {
    /** A seeded share of each user's ratings: {@link PerUserHoldout}. */
    USER,
    /** Each user's latest ratings: {@link TimeHoldout}. */
    TIME;

    /** The rule for this method. {@code seed} is used by the split by user only. */
    public Holdout holdout(double fraction, long seed) {
        return this == USER ? new PerUserHoldout(fraction, seed) : new TimeHoldout(fraction);
    }

    public String label() {
        return name().toLowerCase(Locale.ROOT);
    }

    public static SplitMethod parse(String text) {
        for (SplitMethod s : values()) {
            if (s.label().equals(text)) {
                return s;
            }
        }
        throw new IllegalArgumentException("split '" + text + "' is not one of user, time");
    }
}
