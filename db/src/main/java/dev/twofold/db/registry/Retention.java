package dev.twofold.db.registry;

import dev.twofold.db.ConfigurationException;
import java.util.Map;

/**
 * How many model versions to keep: the {@code keep} newest, plus always the active one and the one
 * a rollback returns to (see {@link ModelRegistry#retain}). Every train applies it after it has
 * stored its version.
 *
 * @param keep newest versions kept, {@value #MIN_KEEP}..{@value #MAX_KEEP}
 */
public record Retention(int keep) {

    /** The variable that sets {@code keep} for every train (the {@code --keep} option overrides it). */
    public static final String ENV_KEEP = "TWOFOLD_KEEP_MODELS";
    public static final int DEFAULT_KEEP = 10;
    public static final int MIN_KEEP = 1;
    public static final int MAX_KEEP = 10_000;

    public Retention {
        if (keep < MIN_KEEP || keep > MAX_KEEP) {
            throw new IllegalArgumentException("keep " + keep + " outside " + MIN_KEEP + ".." + MAX_KEEP);
        }
    }

    public static Retention defaults() {
        return new Retention(DEFAULT_KEEP);
    }

    /**
     * {@value #ENV_KEEP} when set, else the default.
     *
     * @throws ConfigurationException naming the variable, its value and the allowed range
     */
    public static Retention fromEnvironment(Map<String, String> env) {
        String raw = env.get(ENV_KEEP);
        if (raw == null || raw.isBlank()) {
            return defaults();
        }
        String allowed = "; allowed " + MIN_KEEP + ".." + MAX_KEEP + " (default " + DEFAULT_KEEP + ")";
        int keep;
        try {
            keep = Integer.parseInt(raw.trim());
        } catch (NumberFormatException e) {
            throw new ConfigurationException(ENV_KEEP + "=" + raw + " is not a whole number" + allowed);
        }
        if (keep < MIN_KEEP || keep > MAX_KEEP) {
            throw new ConfigurationException(ENV_KEEP + "=" + raw + " is outside the allowed range" + allowed);
        }
        return new Retention(keep);
    }
}
