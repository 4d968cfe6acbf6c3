package dev.twofold.db.ingest;

/** The closed interval ratings must lie in; predictions are clamped to it. */
public record RatingScale(float min, float max) {
    public static final RatingScale DEFAULT = new RatingScale(1f, 5f);

    public RatingScale {
        if (!Float.isFinite(min) || !Float.isFinite(max) || !(min < max)) {
            throw new IllegalArgumentException("rating scale " + min + ".." + max + " must be finite with min < max");
        }
    }

    public boolean contains(double rating) {
        return rating >= min && rating <= max;
    }

    @Override
    public String toString() {
        return format(min) + ".." + format(max);
    }

    private static String format(float v) {
        return v == Math.rint(v) ? Integer.toString((int) v) : Float.toString(v);
    }
}
