package dev.twofold.trainer.publish;

import dev.twofold.trainer.evaluate.Figures;
import java.util.Locale;

/**
 * Decides whether a candidate is good enough to replace the live model, both judged on the same
 * held-out rows. It passes when
 *
 * <pre>
 *   RMSE(candidate)        ≤ RMSE(live)        × (1 + rmseTolerance)       and
 *   precision@k(candidate) ≥ precision@k(live) × (1 − precisionTolerance)
 * </pre>
 *
 * A figure the live model has no value for (no held-out rows, no user with a relevant held-out
 * rating) does not block; a candidate without a value where the live model has one does. With no
 * live model the gate passes.
 *
 * @param rmseTolerance      relative RMSE increase allowed, in [0, 1]; default {@value #DEFAULT_RMSE_TOLERANCE} (0.5%)
 * @param precisionTolerance relative precision@k decrease allowed, in [0, 1]; default {@value #DEFAULT_PRECISION_TOLERANCE} (3%)
 */
public record QualityGate(double rmseTolerance, double precisionTolerance) {

    public static final double DEFAULT_RMSE_TOLERANCE = 0.005;
    public static final double DEFAULT_PRECISION_TOLERANCE = 0.03;

    public QualityGate {
        if (!(rmseTolerance >= 0 && rmseTolerance <= 1)) {
            throw new IllegalArgumentException("RMSE tolerance " + rmseTolerance + " outside 0..1");
        }
        if (!(precisionTolerance >= 0 && precisionTolerance <= 1)) {
            throw new IllegalArgumentException("precision tolerance " + precisionTolerance + " outside 0..1");
        }
    }

    public static QualityGate defaults() {
        return new QualityGate(DEFAULT_RMSE_TOLERANCE, DEFAULT_PRECISION_TOLERANCE);
    }

    /**
     * The gate's finding.
     *
     * @param passes whether the candidate may replace the live model
     * @param reason one sentence: which figures were compared and how they came out
     */
    public record Verdict(boolean passes, String reason) {
    }

    /**
     * @param candidate the candidate's overall figures
     * @param live      the live model's overall figures on the same rows, or null when none is live
     * @param liveId    the live model's id (for the reason)
     * @param k         the list length of precision@k (for the reason)
     */
    public Verdict judge(Figures candidate, Figures live, long liveId, int k) {
        if (live == null) {
            return new Verdict(true, "no model is live");
        }
        String prec = "precision@" + k;
        StringBuilder failed = new StringBuilder();
        StringBuilder held = new StringBuilder();
        if (Double.isFinite(live.rmse())) {
            double limit = live.rmse() * (1 + rmseTolerance);
            boolean ok = candidate.rmse() <= limit; // false for NaN
            add(ok ? held : failed, String.format(Locale.ROOT, "held-out RMSE %.4f %s live model %d's %.4f × %.3f = %.4f",
                    candidate.rmse(), ok ? "≤" : "is above", liveId, live.rmse(), 1 + rmseTolerance, limit));
        }
        if (Double.isFinite(live.precision())) {
            double limit = live.precision() * (1 - precisionTolerance);
            boolean ok = candidate.precision() >= limit; // false for NaN
            add(ok ? held : failed, String.format(Locale.ROOT, "%s %.4f %s live model %d's %.4f × %.3f = %.4f", prec,
                    candidate.precision(), ok ? "≥" : "is below", liveId, live.precision(), 1 - precisionTolerance, limit));
        }
        if (failed.length() > 0) {
            return new Verdict(false, failed.toString());
        }
        if (held.length() == 0) {
            return new Verdict(true, "live model " + liveId + " has no held-out figures on these rows to compare with");
        }
        return new Verdict(true, held.toString());
    }

    private static void add(StringBuilder into, String clause) {
        into.append(into.length() > 0 ? "; " : "").append(clause);
    }
}
