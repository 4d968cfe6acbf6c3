package dev.twofold.trainer.publish;

import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.twofold.trainer.evaluate.BaselineFigures;
import dev.twofold.trainer.evaluate.Figures;
import dev.twofold.trainer.evaluate.SegmentFigures;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.sweep.SweepPoint;
import java.util.Locale;

/**
 * The JSON objects stored with a model version. Figures that were not computed (or had no rows) are
 * null. Layout of the metrics:
 *
 * <pre>
 * {"k":10, "relevance":4.0, "coldMaxRatings":5,
 *  "model": {"overall": FIGURES, "cold": FIGURES},
 *  "baselines": {"globalMean": {...}, "biasesOnly": {...}, "mostPopular": {...}, "withoutTrust": {...} or null},
 *  "comparison": {"activeModelId": 3 or null, "activeRmse": 0.91 or null, "candidateRmse": 0.90,
 *                 "tolerance": 0.005, "decision": "promoted" or "rejected", "reason": null or "..."},
 *  "training": {"epochs": 20, "objective": 1234.5, "failedSolves": 0},
 *  "tuning": null or {"why": "...", "chosen": {"rank", "lambda", "epochs"},
 *             "sweep": [{"rank", "lambda", "validationRmse", "precision", "bestEpoch", "epochsRun", "seconds"}]}}
 * FIGURES = {"rows", "rmse", "mae", "rankedUsers", "precision", "recall", "ndcg", "map", "coverage"}
 * </pre>
 */
final class MetricsJson {

    private static final ObjectMapper MAPPER = new ObjectMapper();

    private MetricsJson() {
    }

    static String metrics(TrainReport report, TrainSettings settings) {
        double candidateRmse = report.model().overall().rmse();
        ObjectNode root = MAPPER.createObjectNode();
        root.put("k", settings.k());
        root.put("relevance", settings.relevance());
        root.put("coldMaxRatings", settings.evaluation().coldMaxRatings());
        root.set("model", segments(report.model()));
        ObjectNode baselines = root.putObject("baselines");
        BaselineFigures b = report.baselines();
        baselines.set("globalMean", segments(b.globalMean()));
        baselines.set("biasesOnly", segments(b.biasesOnly()));
        baselines.set("mostPopular", segments(b.mostPopular()));
        baselines.set("withoutTrust", b.withoutTrust() == null ? null : segments(b.withoutTrust()));
        ObjectNode comparison = root.putObject("comparison");
        if (report.activeModelId() == null) {
            comparison.putNull("activeModelId");
        } else {
            comparison.put("activeModelId", report.activeModelId());
        }
        number(comparison, "activeRmse", report.activeRmse());
        number(comparison, "candidateRmse", candidateRmse);
        comparison.put("tolerance", settings.promoteTolerance());
        comparison.put("decision", report.decision().name().toLowerCase(Locale.ROOT));
        comparison.put("reason", report.reason());
        ObjectNode training = root.putObject("training");
        training.put("epochs", report.history().size());
        number(training, "objective", report.history().isEmpty() ? Double.NaN
                : report.history().get(report.history().size() - 1).objective());
        training.put("failedSolves", report.history().stream().mapToInt(e -> e.failedSolves()).sum());
        if (report.tuning() == null) {
            root.putNull("tuning");
        } else {
            ObjectNode tuning = root.putObject("tuning");
            tuning.put("why", report.tuning());
            ObjectNode chosen = tuning.putObject("chosen");
            chosen.put("rank", settings.fit().rank());
            chosen.put("lambda", settings.fit().lambda());
            chosen.put("epochs", settings.fit().epochs());
            ArrayNode points = tuning.putArray("sweep");
            if (report.sweep() != null) {
                for (SweepPoint p : report.sweep().points()) {
                    ObjectNode point = points.addObject();
                    point.put("rank", p.rank());
                    point.put("lambda", p.lambda());
                    number(point, "validationRmse", p.validationRmse());
                    number(point, "precision", p.precision());
                    point.put("bestEpoch", p.bestEpoch());
                    point.put("epochsRun", p.epochsRun());
                    point.put("seconds", p.seconds());
                }
            }
        }
        return write(root);
    }

    static String params(TrainSettings settings) {
        FitSettings f = settings.fit();
        ObjectNode root = MAPPER.createObjectNode();
        root.put("solver", settings.solver().label());
        root.put("split", settings.split().label());
        root.put("rank", f.rank());
        root.put("lambda", f.lambda());
        root.put("trustWeight", f.trustWeight());
        root.put("trustAlpha", f.trustAlpha());
        root.put("coupling", f.coupling().label());
        root.put("biases", f.biases());
        root.put("epochs", f.epochs());
        root.put("seed", f.seed());
        root.put("threads", f.threads());
        root.put("patience", f.patience());
        root.put("initScale", f.initScale());
        root.put("holdout", settings.holdout());
        root.put("splitSeed", settings.splitSeed());
        root.put("relevance", settings.relevance());
        root.put("k", settings.k());
        root.put("trainPatience", settings.patience());
        root.put("scaleMin", settings.scale().min());
        root.put("scaleMax", settings.scale().max());
        root.put("promoteTolerance", settings.promoteTolerance());
        return write(root);
    }

    static String counts(TrainReport.Counts c) {
        ObjectNode root = MAPPER.createObjectNode();
        root.put("users", c.users());
        root.put("items", c.items());
        root.put("ratings", c.ratings());
        root.put("trustEdges", c.trustEdges());
        root.put("trainRatings", c.trainRatings());
        root.put("heldOutRatings", c.heldOutRatings());
        root.put("coldUsers", c.coldUsers());
        return write(root);
    }

    private static ObjectNode segments(SegmentFigures f) {
        ObjectNode node = MAPPER.createObjectNode();
        node.set("overall", figures(f.overall()));
        node.set("cold", figures(f.cold()));
        return node;
    }

    private static ObjectNode figures(Figures f) {
        ObjectNode node = MAPPER.createObjectNode();
        node.put("rows", f.rows());
        number(node, "rmse", f.rmse());
        number(node, "mae", f.mae());
        node.put("rankedUsers", f.rankedUsers());
        number(node, "precision", f.precision());
        number(node, "recall", f.recall());
        number(node, "ndcg", f.ndcg());
        number(node, "map", f.map());
        number(node, "coverage", f.coverage());
        return node;
    }

    private static void number(ObjectNode node, String name, double value) {
        if (Double.isFinite(value)) {
            node.put(name, value);
        } else {
            node.putNull(name);
        }
    }

    private static String write(ObjectNode node) {
        try {
            return MAPPER.writeValueAsString(node);
        } catch (JsonProcessingException e) {
            throw new IllegalStateException("could not write JSON: " + e.getMessage(), e);
        }
    }
}
