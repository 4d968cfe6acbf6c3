package dev.twofold.trainer.publish;

import dev.twofold.trainer.evaluate.BaselineFigures;
import dev.twofold.trainer.evaluate.Figures;
import dev.twofold.trainer.evaluate.SegmentFigures;
import dev.twofold.trainer.fit.EpochReport;
import dev.twofold.trainer.sweep.SweepResult;
import dev.twofold.trainer.fit.FitSettings;
import java.time.Duration;
import java.util.List;
import java.util.Locale;
import java.util.Map;

/**
 * What one retrain did: the same facts for a person ({@link #summary()}) and for a pipeline
 * ({@link #toJson()}).
 *
 * @param modelId     the stored model version
 * @param decision    promoted, kept as a candidate, or rejected
 * @param reason      why: the quality gate's finding, and the policy when it overrode the gate
 * @param settings    how the model was trained and evaluated (after tuning: the rank, λ and epochs used)
 * @param publish     promotion policy, gate tolerances and retention of the run
 * @param counts      data counts (users, items, ratings, trust edges, training and held-out ratings, ...)
 * @param phases      wall time per phase, in pipeline order
 * @param model       held-out figures of the model
 * @param baselines   held-out figures of the baselines
 * @param liveModelId the model that was live when the candidate was judged, or null when there was none
 * @param activeModelId the model active when the run ended (this one when promoted), or null
 * @param live        that model's figures on the same held-out rows, or null
 * @param verdict     the quality gate's finding against the live model
 * @param notes       caveats about the comparison (for example a live model trained on another split)
 * @param recovered   versions left {@code training} by a trainer that died, marked failed at the start
 * @param deleted     versions deleted by retention at the end
 * @param history     one report per training epoch
 * @param tuning      how rank, λ and the epoch count were chosen, or null when they were given
 * @param sweep       the sweep behind that choice, or null
 */
public record TrainReport(
        long modelId,
        Decision decision,
        String reason,
        TrainSettings settings,
        PublishSettings publish,
        Counts counts,
        Map<String, Duration> phases,
        SegmentFigures model,
        BaselineFigures baselines,
        Long liveModelId,
        Long activeModelId,
        SegmentFigures live,
        QualityGate.Verdict verdict,
        List<String> notes,
        List<Long> recovered,
        List<Long> deleted,
        List<EpochReport> history,
        String tuning,
        SweepResult sweep) {

    /** Data counts of a retrain. */
    public record Counts(int users, int items, int ratings, int trustEdges, int trainRatings, int heldOutRatings,
            int coldUsers) {
    }

    /** List length of the ranking figures. */
    public int k() {
        return settings.k();
    }

    /** The live model's held-out RMSE on the candidate's rows, NaN when no model was live. */
    public double liveRmse() {
        return live == null ? Double.NaN : live.overall().rmse();
    }

    /** Wall time of all phases. */
    public Duration total() {
        Duration total = Duration.ZERO;
        for (Duration d : phases.values()) {
            total = total.plus(d);
        }
        return total;
    }

    /** The report as one JSON document (see {@link MetricsJson#report}). */
    public String toJson() {
        return MetricsJson.report(this);
    }

    /**
     * The report for a person: the decision and why, data counts, parameters, time per phase, the
     * candidate against the live model and the baselines on the same held-out rows, what was
     * recovered and cleaned up.
     */
    public String summary() {
        StringBuilder s = new StringBuilder();
        s.append(String.format(Locale.ROOT, "model %d: %s%n", modelId, headline()));
        s.append("  ").append(reason).append(System.lineSeparator());
        s.append(String.format(Locale.ROOT, "data: %,d users, %,d items, %,d ratings (%,d train, %,d held out), %,d trust edges;"
                + " %,d cold users (≤ %d training ratings) with held-out ratings%n",
                counts.users(), counts.items(), counts.ratings(), counts.trainRatings(), counts.heldOutRatings(),
                counts.trustEdges(), counts.coldUsers(), settings.evaluation().coldMaxRatings()));
        if (tuning != null) {
            s.append("tuning: ").append(tuning).append(System.lineSeparator());
        }
        FitSettings f = settings.fit();
        s.append(String.format(Locale.ROOT, "parameters: rank %d, lambda %s, coupling %s (trust weight %s, alpha %s), bias"
                + " prior %s, %d epochs, seed %d, holdout %s; relevant ≥ %s, k %d%n", f.rank(), plain(f.lambda()),
                f.coupling().label(), plain(f.trustWeight()), plain(f.trustAlpha()), plain(f.biasPrior()), f.epochs(),
                f.seed(), plain(settings.holdout()), plain(settings.relevance()), settings.k()));
        QualityGate g = publish.gate();
        s.append(String.format(Locale.ROOT, "promotion: --promote %s; gate: RMSE at most +%s, precision@%d at most -%s against"
                + " the live model; keep %d versions%n", publish.policy().label(), percent(g.rmseTolerance()), settings.k(),
                percent(g.precisionTolerance()), publish.retention().keep()));
        s.append("time:");
        for (Map.Entry<String, Duration> e : phases.entrySet()) {
            s.append(String.format(Locale.ROOT, " %s %.2fs", e.getKey(), e.getValue().toMillis() / 1000.0));
        }
        s.append(String.format(Locale.ROOT, ", total %.2fs%n", total().toMillis() / 1000.0));
        int k = settings.k();
        s.append(String.format(Locale.ROOT, "%-22s %8s %8s %9s %9s %9s %9s %9s%n", "held-out (same rows)", "RMSE", "MAE",
                "prec@" + k, "recall@" + k, "nDCG@" + k, "coverage", "cold RMSE"));
        row(s, "candidate " + modelId, model);
        if (liveModelId != null) {
            row(s, "live " + liveModelId, live);
        }
        row(s, "without trust", baselines.withoutTrust());
        row(s, "biases only", baselines.biasesOnly());
        row(s, "global mean", baselines.globalMean());
        row(s, "most popular", baselines.mostPopular());
        for (String note : notes) {
            s.append("note: ").append(note).append(System.lineSeparator());
        }
        if (!recovered.isEmpty()) {
            s.append("recovered: model").append(recovered.size() == 1 ? " " : "s ").append(ids(recovered))
                    .append(" had been left training by a trainer that ended; marked failed").append(System.lineSeparator());
        }
        if (!deleted.isEmpty()) {
            s.append("retention: deleted model").append(deleted.size() == 1 ? " " : "s ").append(ids(deleted))
                    .append(System.lineSeparator());
        }
        return s.toString();
    }

    private String headline() {
        return switch (decision) {
            case PROMOTED -> liveModelId == null ? "promoted to active (the first live model)"
                    : "promoted to active, replacing model " + liveModelId;
            case CANDIDATE -> "stored as a candidate, not promoted (twofold models promote " + modelId + " makes it live)";
            case REJECTED -> "rejected, not promoted" + (liveModelId == null ? "" : "; model " + liveModelId + " stays live");
        };
    }

    private static void row(StringBuilder s, String name, SegmentFigures f) {
        if (f == null) {
            return;
        }
        Figures o = f.overall();
        s.append(String.format(Locale.ROOT, "%-22s %8s %8s %9s %9s %9s %9s %9s%n", name, number(o.rmse()), number(o.mae()),
                number(o.precision()), number(o.recall()), number(o.ndcg()), number(o.coverage()), number(f.cold().rmse())));
    }

    private static String ids(List<Long> ids) {
        StringBuilder s = new StringBuilder();
        for (Long id : ids) {
            s.append(s.length() == 0 ? "" : ", ").append(id);
        }
        return s.toString();
    }

    private static String number(double v) {
        return Double.isFinite(v) ? String.format(Locale.ROOT, "%.4f", v) : "-";
    }

    private static String plain(double v) {
        return v == Math.rint(v) && Math.abs(v) < 1e9 ? Long.toString((long) v) : String.format(Locale.ROOT, "%s", (float) v);
    }

    private static String percent(double fraction) {
        return String.format(Locale.ROOT, "%s%%", plain(Math.round(fraction * 100_000) / 1000.0));
    }
}
