package dev.twofold.trainer.publish;

import dev.twofold.trainer.evaluate.BaselineFigures;
import dev.twofold.trainer.evaluate.Figures;
import dev.twofold.trainer.evaluate.SegmentFigures;
import dev.twofold.trainer.fit.EpochReport;
import dev.twofold.trainer.sweep.SweepResult;
import java.time.Duration;
import java.util.List;
import java.util.Locale;
import java.util.Map;

/**
 * What one retrain did.
 *
 * @param modelId        the stored model version
 * @param decision       promoted or rejected
 * @param reason         why it was rejected, or null
 * @param counts         data counts (users, items, ratings, trust edges, training and held-out ratings, ...)
 * @param phases         wall time per phase, in pipeline order
 * @param k              list length of the ranking figures
 * @param model          held-out figures of the model
 * @param baselines      held-out figures of the baselines
 * @param activeModelId  the model that was active before, or null when there was none
 * @param activeRmse     that model's RMSE on the same held-out rows, NaN when there was none
 * @param history        one report per training epoch
 * @param tuning         how rank, λ and the epoch count were chosen, or null when they were given
 * @param sweep          the sweep behind that choice, or null
 */
public record TrainReport(
        long modelId,
        Decision decision,
        String reason,
        Counts counts,
        Map<String, Duration> phases,
        int k,
        SegmentFigures model,
        BaselineFigures baselines,
        Long activeModelId,
        double activeRmse,
        List<EpochReport> history,
        String tuning,
        SweepResult sweep) {

    /** Data counts of a retrain. */
    public record Counts(int users, int items, int ratings, int trustEdges, int trainRatings, int heldOutRatings,
            int coldUsers) {
    }

    /** A short report for a person: counts, time per phase, figures against the baselines, the decision. */
    public String summary() {
        StringBuilder s = new StringBuilder();
        s.append(String.format(Locale.ROOT, "model %d: %s%n", modelId,
                decision == Decision.PROMOTED ? "promoted to active" : "not promoted (" + reason + ")"));
        s.append(String.format(Locale.ROOT, "data: %,d users, %,d items, %,d ratings (%,d train, %,d held out), %,d trust edges%n",
                counts.users(), counts.items(), counts.ratings(), counts.trainRatings(), counts.heldOutRatings(),
                counts.trustEdges()));
        if (tuning != null) {
            s.append("tuning: ").append(tuning).append(System.lineSeparator());
        }
        s.append("time:");
        Duration total = Duration.ZERO;
        for (Map.Entry<String, Duration> e : phases.entrySet()) {
            s.append(String.format(Locale.ROOT, " %s %.2fs", e.getKey(), e.getValue().toMillis() / 1000.0));
            total = total.plus(e.getValue());
        }
        s.append(String.format(Locale.ROOT, ", total %.2fs%n", total.toMillis() / 1000.0));
        s.append(String.format(Locale.ROOT, "%-22s %8s %8s %10s %10s%n", "held-out", "RMSE", "MAE", "prec@" + k,
                "cold RMSE"));
        row(s, "model", model);
        row(s, "without trust", baselines.withoutTrust());
        row(s, "biases only", baselines.biasesOnly());
        row(s, "global mean", baselines.globalMean());
        row(s, "most popular", baselines.mostPopular());
        if (activeModelId != null) {
            s.append(String.format(Locale.ROOT, "active model %d on the same rows: RMSE %.4f%n", activeModelId, activeRmse));
        }
        s.append(String.format(Locale.ROOT, "cold users (≤ 5 training ratings) with held-out ratings: %,d%n",
                counts.coldUsers()));
        return s.toString();
    }

    private static void row(StringBuilder s, String name, SegmentFigures f) {
        if (f == null) {
            return;
        }
        Figures o = f.overall();
        s.append(String.format(Locale.ROOT, "%-22s %8s %8s %10s %10s%n", name, number(o.rmse()), number(o.mae()),
                number(o.precision()), number(f.cold().rmse())));
    }

    private static String number(double v) {
        return Double.isFinite(v) ? String.format(Locale.ROOT, "%.4f", v) : "-";
    }
}
