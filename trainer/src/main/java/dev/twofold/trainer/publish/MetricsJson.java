package dev.twofold.trainer.publish;

import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.twofold.db.TwofoldException;
import dev.twofold.db.registry.RetrainLock;
import dev.twofold.trainer.evaluate.BaselineFigures;
import dev.twofold.trainer.evaluate.Figures;
import dev.twofold.trainer.evaluate.SegmentFigures;
import dev.twofold.trainer.fit.EpochReport;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.sweep.SweepPoint;

/**
 * The JSON objects stored with a model version, and the report of a run. Figures that were not
 * computed (or had no rows) are null. Layout of the stored metrics:
 *
 * <pre>
 * {"k":10, "relevance":4.0, "coldMaxRatings":5,
 *  "model": {"overall": FIGURES, "cold": FIGURES},
 *  "live": {"overall": FIGURES, "cold": FIGURES} or null   (the live model on the same held-out rows)
 *  "baselines": {"globalMean": {...}, "biasesOnly": {...}, "mostPopular": {...}, "withoutTrust": {...} or null},
 *  "comparison": {"activeModelId": 3 or null, "activeRmse": 0.91 or null, "candidateRmse": 0.90,
 *                 "activePrecision": 0.08 or null, "candidatePrecision": 0.081,
 *                 "policy": "auto", "rmseTolerance": 0.005, "precisionTolerance": 0.03,
 *                 "gatePassed": true, "verdict": "...",
 *                 "decision": "promoted", "candidate" or "rejected", "reason": "..."},
 *  "training": {"epochs": 20, "objective": 1234.5, "failedSolves": 0,
 *               "history": [{"epoch": 1, "objective": 2345.6, "failedSolves": 0}, ...]},
 *  "tuning": null or {"why": "...", "chosen": {"rank", "lambda", "epochs"},
 *             "sweep": [{"rank", "lambda", "validationRmse", "precision", "bestEpoch", "epochsRun", "seconds"}]}}
 * FIGURES = {"rows", "rmse", "mae", "rankedUsers", "precision", "recall", "ndcg", "map", "coverage"}
 * </pre>
 *
 * The report of a run ({@link #report}) is one document for pipelines:
 *
 * <pre>
 * {"outcome": "promoted" | "candidate" | "rejected", "modelId": 12, "reason": "...",
 *  "liveModelId": 11 or null, "activeModelId": the active model after the run or null,
 *  "gate": {"policy", "rmseTolerance", "precisionTolerance", "passed", "verdict"},
 *  "counts": {...}, "params": {...}, "phases": {"lock": 0.01, "read": 0.52, ...} (seconds), "totalSeconds": 9.8,
 *  "figures": {"k", "relevance", "candidate": SEGMENTS, "live": SEGMENTS or null, "baselines": {...}},
 *  "notes": [...], "recovered": [ids failed as orphans], "deleted": [ids removed by retention],
 *  "training": {...}}
 * </pre>
 *
 * A run that does not finish prints {@code {"outcome": "failed" | "locked", "exitCode": N, "reason": "...",
 * "modelId": id or null, "holder": {...} or null}} instead (see {@link #failure}).
 */
final class MetricsJson {

    private static final ObjectMapper MAPPER = new ObjectMapper();

    private MetricsJson() {
    }

    static String metrics(TrainReport report) {
        return write(metricsNode(report));
    }

    private static ObjectNode metricsNode(TrainReport report) {
        TrainSettings settings = report.settings();
        ObjectNode root = MAPPER.createObjectNode();
        root.put("k", settings.k());
        root.put("relevance", settings.relevance());
        root.put("coldMaxRatings", settings.evaluation().coldMaxRatings());
        root.set("model", segments(report.model()));
        root.set("live", report.live() == null ? null : segments(report.live()));
        root.set("baselines", baselines(report.baselines()));
        ObjectNode comparison = root.putObject("comparison");
        if (report.liveModelId() == null) {
            comparison.putNull("activeModelId");
        } else {
            comparison.put("activeModelId", report.liveModelId());
        }
        number(comparison, "activeRmse", report.liveRmse());
        number(comparison, "candidateRmse", report.model().overall().rmse());
        number(comparison, "activePrecision", report.live() == null ? Double.NaN : report.live().overall().precision());
        number(comparison, "candidatePrecision", report.model().overall().precision());
        comparison.put("policy", report.publish().policy().label());
        comparison.put("rmseTolerance", report.publish().gate().rmseTolerance());
        comparison.put("precisionTolerance", report.publish().gate().precisionTolerance());
        comparison.put("gatePassed", report.verdict().passes());
        comparison.put("verdict", report.verdict().reason());
        comparison.put("decision", report.decision().label());
        comparison.put("reason", report.reason());
        root.set("training", training(report));
        root.set("tuning", tuning(report));
        return root;
    }

    static String report(TrainReport report) {
        ObjectNode root = MAPPER.createObjectNode();
        root.put("outcome", report.decision().label());
        root.put("modelId", report.modelId());
        root.put("reason", report.reason());
        optionalId(root, "liveModelId", report.liveModelId());
        optionalId(root, "activeModelId", report.activeModelId());
        ObjectNode gate = root.putObject("gate");
        gate.put("policy", report.publish().policy().label());
        gate.put("rmseTolerance", report.publish().gate().rmseTolerance());
        gate.put("precisionTolerance", report.publish().gate().precisionTolerance());
        gate.put("passed", report.verdict().passes());
        gate.put("verdict", report.verdict().reason());
        root.set("counts", read(counts(report.counts())));
        root.set("params", read(params(report.settings(), report.publish())));
        ObjectNode phases = root.putObject("phases");
        report.phases().forEach((name, d) -> phases.put(name, d.toNanos() / 1e9));
        root.put("totalSeconds", report.total().toNanos() / 1e9);
        ObjectNode figures = root.putObject("figures");
        figures.put("k", report.settings().k());
        figures.put("relevance", report.settings().relevance());
        figures.put("coldMaxRatings", report.settings().evaluation().coldMaxRatings());
        figures.set("candidate", segments(report.model()));
        figures.set("live", report.live() == null ? null : segments(report.live()));
        figures.set("baselines", baselines(report.baselines()));
        ArrayNode notes = root.putArray("notes");
        report.notes().forEach(notes::add);
        ArrayNode recovered = root.putArray("recovered");
        report.recovered().forEach(recovered::add);
        ArrayNode deleted = root.putArray("deleted");
        report.deleted().forEach(deleted::add);
        root.set("training", training(report));
        root.set("tuning", tuning(report));
        return write(root);
    }

    /** How rank, λ and the epoch count were chosen, or null when they were given. */
    private static ObjectNode tuning(TrainReport report) {
        if (report.tuning() == null) {
            return null;
        }
        TrainSettings settings = report.settings();
        ObjectNode tuning = MAPPER.createObjectNode();
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
        return tuning;
    }

    /**
     * The document printed instead of a report when a run stops: {@code outcome} {@code locked}
     * (another retrain holds the lock, exit 75) or {@code failed} (anything else).
     *
     * @param modelId the version the run had created (now {@code failed}), or null
     * @param holder  the lock holder, for {@code locked}, or null
     */
    static String failure(int exitCode, String reason, Long modelId, RetrainLock.Holder holder) {
        ObjectNode root = MAPPER.createObjectNode();
        root.put("outcome", exitCode == TwofoldException.EXIT_LOCKED ? "locked" : "failed");
        root.put("exitCode", exitCode);
        root.put("reason", reason);
        optionalId(root, "modelId", modelId);
        if (holder == null) {
            root.putNull("holder");
        } else {
            ObjectNode h = root.putObject("holder");
            h.put("host", holder.host());
            h.put("processId", holder.processId());
            h.put("command", holder.command());
            h.put("since", holder.since() == null ? null : holder.since().toString());
            h.put("backendPid", holder.backendPid());
            h.put("applicationName", holder.applicationName());
        }
        return write(root);
    }

    static String params(TrainSettings settings, PublishSettings publish) {
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
        root.put("biasPrior", f.biasPrior());
        root.put("holdout", settings.holdout());
        root.put("splitSeed", settings.splitSeed());
        root.put("relevance", settings.relevance());
        root.put("k", settings.k());
        root.put("trainPatience", settings.patience());
        root.put("scaleMin", settings.scale().min());
        root.put("scaleMax", settings.scale().max());
        root.put("promote", publish.policy().label());
        root.put("rmseTolerance", publish.gate().rmseTolerance());
        root.put("precisionTolerance", publish.gate().precisionTolerance());
        root.put("keep", publish.retention().keep());
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

    private static ObjectNode baselines(BaselineFigures b) {
        ObjectNode baselines = MAPPER.createObjectNode();
        baselines.set("globalMean", segments(b.globalMean()));
        baselines.set("biasesOnly", segments(b.biasesOnly()));
        baselines.set("mostPopular", segments(b.mostPopular()));
        baselines.set("withoutTrust", b.withoutTrust() == null ? null : segments(b.withoutTrust()));
        return baselines;
    }

    private static ObjectNode training(TrainReport report) {
        ObjectNode training = MAPPER.createObjectNode();
        training.put("epochs", report.history().size());
        number(training, "objective", report.history().isEmpty() ? Double.NaN
                : report.history().get(report.history().size() - 1).objective());
        training.put("failedSolves", report.history().stream().mapToInt(e -> e.failedSolves()).sum());
        ArrayNode epochs = training.putArray("history");
        for (EpochReport e : report.history()) {
            ObjectNode epoch = epochs.addObject();
            epoch.put("epoch", e.epoch());
            number(epoch, "objective", e.objective());
            epoch.put("failedSolves", e.failedSolves());
        }
        return training;
    }

    private static void optionalId(ObjectNode node, String name, Long id) {
        if (id == null) {
            node.putNull(name);
        } else {
            node.put(name, id.longValue());
        }
    }

    private static JsonNode read(String json) {
        try {
            return MAPPER.readTree(json);
        } catch (JsonProcessingException e) {
            throw new IllegalStateException("could not read back JSON we wrote: " + e.getMessage(), e);
        }
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
