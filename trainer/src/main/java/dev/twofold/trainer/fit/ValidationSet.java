package dev.twofold.trainer.fit;

/**
 * Held-out ratings a fit reports its RMSE on after each epoch (and may stop early on). Predictions
 * are clamped to {@code [scaleMin, scaleMax]} as at serving time.
 */
public record ValidationSet(int[] users, int[] items, float[] values, float scaleMin, float scaleMax) {

    public ValidationSet {
        if (users.length != items.length || users.length != values.length) {
            throw new IllegalArgumentException("validation arrays differ in length: users " + users.length + ", items "
                    + items.length + ", values " + values.length);
        }
        if (!(scaleMin < scaleMax)) {
            throw new IllegalArgumentException("validation scale " + scaleMin + ".." + scaleMax + " needs min < max");
        }
    }

    /** No validation rows: no RMSE is reported and early stopping is off. */
    public static ValidationSet none() {
        return new ValidationSet(new int[0], new int[0], new float[0], 0f, 1f);
    }

    /** The rows at {@code positions} of parallel rating arrays. */
    public static ValidationSet of(int[] user, int[] item, float[] value, int[] positions, float scaleMin, float scaleMax) {
        int[] u = new int[positions.length];
        int[] i = new int[positions.length];
        float[] v = new float[positions.length];
        for (int s = 0; s < positions.length; s++) {
            u[s] = user[positions[s]];
            i[s] = item[positions[s]];
            v[s] = value[positions[s]];
        }
        return new ValidationSet(u, i, v, scaleMin, scaleMax);
    }

    public int size() {
        return values.length;
    }

    public boolean isEmpty() {
        return values.length == 0;
    }

    /** RMSE of the model's clamped predictions on these rows, NaN when there are none. */
    public double rmse(FittedModel model) {
        if (values.length == 0) {
            return Double.NaN;
        }
        double sum = 0;
        for (int s = 0; s < values.length; s++) {
            double e = values[s] - model.predict(users[s], items[s], scaleMin, scaleMax);
            sum += e * e;
        }
        return Math.sqrt(sum / values.length);
    }
}
