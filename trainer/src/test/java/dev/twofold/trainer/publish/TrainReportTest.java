package dev.twofold.trainer.publish;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.twofold.db.registry.RetrainLock;
import dev.twofold.trainer.evaluate.BaselineFigures;
import dev.twofold.trainer.evaluate.Figures;
import dev.twofold.trainer.evaluate.SegmentFigures;
import dev.twofold.trainer.fit.EpochReport;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.sweep.SweepPoint;
import dev.twofold.trainer.sweep.SweepResult;
import java.time.Duration;
import java.time.Instant;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;

class TrainReportTest {

    private static final ObjectMapper JSON = new ObjectMapper();
    private static final Figures ERRORS = new Figures(100, 0.8123, 0.6, 0, Double.NaN, Double.NaN, Double.NaN, Double.NaN,
            Double.NaN);
    private static final Figures FULL = new Figures(100, 0.7012, 0.5, 40, 0.123, 0.2, 0.3, 0.25, 0.6);
    private static final Figures LIVE = new Figures(100, 0.6900, 0.49, 40, 0.125, 0.21, 0.31, 0.26, 0.55);
    private static final Figures RANKING = new Figures(0, Double.NaN, Double.NaN, 40, 0.081, 0.1, 0.2, 0.15, 0.05);

    private static TrainReport report(Decision decision, String reason, Long live) {
        Map<String, Duration> phases = new LinkedHashMap<>();
        phases.put("read", Duration.ofMillis(120));
        phases.put("fit", Duration.ofMillis(2500));
        return new TrainReport(3, decision, reason, TrainSettings.defaults(), PublishSettings.defaults(),
                new TrainReport.Counts(50, 20, 400, 90, 320, 80, 7), phases, new SegmentFigures(FULL, FULL),
                new BaselineFigures(new SegmentFigures(ERRORS, ERRORS), new SegmentFigures(FULL, FULL),
                        new SegmentFigures(RANKING, RANKING), null),
                live, decision == Decision.PROMOTED ? Long.valueOf(3) : live, live == null ? null : new SegmentFigures(LIVE, LIVE),
                new QualityGate.Verdict(live == null, live == null ? "no model is live" : "held-out RMSE is above"),
                List.of(), List.of(1L), List.of(), List.of(new EpochReport(1, 123.4, Double.NaN, 0)), null, null);
    }

    private static TrainReport tuned() {
        TrainReport r = report(Decision.PROMOTED, "quality gate passed: no model is live", null);
        SweepResult sweep = new SweepResult(List.of(new SweepPoint(4, 0.02f, 0.91, 0.05, 7, 9, 1.5),
                new SweepPoint(8, 0.02f, 0.88, 0.06, 12, 14, 2.5)), 10);
        TrainSettings chosen = r.settings().withFit(r.settings().fit().withRank(8).withEpochs(12));
        return new TrainReport(r.modelId(), r.decision(), r.reason(), chosen, r.publish(), r.counts(), r.phases(),
                r.model(), r.baselines(), r.liveModelId(), r.activeModelId(), r.live(), r.verdict(), r.notes(), r.recovered(),
                r.deleted(), r.history(), "no --rank given: " + sweep.why(), sweep);
    }

    @Test
    void a_tuned_report_says_what_was_chosen_and_keeps_the_sweep_in_its_metrics() throws Exception {
        TrainReport report = tuned();
        assertTrue(report.summary().contains("tuning: no --rank given: chose rank 8, lambda 0.02: lowest validation "
                + "RMSE 0.8800 of 2 settings"), report.summary());
        JsonNode json = new ObjectMapper().readTree(MetricsJson.metrics(report));
        assertEquals(8, json.at("/tuning/chosen/rank").asInt());
        assertEquals(12, json.at("/tuning/chosen/epochs").asInt());
        assertEquals(2, json.at("/tuning/sweep").size());
        assertEquals(0.91, json.at("/tuning/sweep/0/validationRmse").asDouble(), 0.0);
        assertEquals(8, JSON.readTree(report.toJson()).at("/tuning/chosen/rank").asInt(), "the --json report has it too");
    }

    @Test
    void summary_shows_decision_counts_parameters_times_and_figures_against_baselines() {
        String text = report(Decision.PROMOTED, "quality gate passed: no model is live", null).summary();
        assertTrue(text.startsWith("model 3: promoted to active (the first live model)\n  quality gate passed: no model is live\n"),
                text);
        assertTrue(text.contains("400 ratings (320 train, 80 held out), 90 trust edges"), text);
        FitSettings fit = TrainSettings.defaults().fit();
        assertTrue(text.contains("parameters: rank " + fit.rank() + ", lambda " + fit.lambda() + ", coupling "
                + fit.coupling().label()), text);
        assertTrue(text.contains("bias prior 2, "), text);
        assertTrue(text.contains("promotion: --promote auto; gate: RMSE at most +0.5%, precision@10 at most -3%"), text);
        assertTrue(text.contains("fit 2.50s"), text);
        assertTrue(text.contains("total 2.62s"), text);
        assertTrue(text.contains("prec@10"), text);
        assertTrue(text.matches("(?s).*candidate 3\\s+0\\.7012\\s+0\\.5000\\s+0\\.1230\\s+0\\.2000\\s+0\\.3000\\s+0\\.6000.*"), text);
        assertTrue(text.matches("(?s).*global mean\\s+0\\.8123\\s+0\\.6000\\s+-.*"), text);
        assertTrue(text.matches("(?s).*most popular\\s+-\\s+-\\s+0\\.0810.*"), text);
        assertFalse(text.contains("without trust"), "no row for a baseline that was not run");
        assertFalse(text.contains("\nlive "), "no live row without a live model");
        assertTrue(text.contains("recovered: model 1 had been left training"), text);
    }

    @Test
    void a_rejection_shows_the_live_model_beside_the_candidate_and_the_reason() {
        String text = report(Decision.REJECTED, "quality gate failed: held-out RMSE is above", 2L).summary();
        assertTrue(text.startsWith("model 3: rejected, not promoted; model 2 stays live\n  quality gate failed"), text);
        assertTrue(text.matches("(?s).*live 2\\s+0\\.6900\\s+0\\.4900\\s+0\\.1250.*"), text);
    }

    @Test
    void metrics_json_keeps_figures_and_the_comparison_and_writes_missing_ones_as_null() throws Exception {
        JsonNode json = JSON.readTree(MetricsJson.metrics(report(Decision.REJECTED, "gate failed", 2L)));
        assertEquals(0.7012, json.at("/model/overall/rmse").asDouble());
        assertEquals(0.69, json.at("/live/overall/rmse").asDouble());
        assertTrue(json.at("/baselines/globalMean/overall/precision").isNull());
        assertTrue(json.at("/baselines/withoutTrust").isNull());
        assertEquals("rejected", json.at("/comparison/decision").asText());
        assertEquals(2, json.at("/comparison/activeModelId").asLong());
        assertEquals(0.125, json.at("/comparison/activePrecision").asDouble());
        assertEquals("auto", json.at("/comparison/policy").asText());
        assertFalse(json.at("/comparison/gatePassed").asBoolean());
        assertEquals(1, json.at("/training/epochs").asInt());
        assertTrue(json.at("/tuning").isNull());
    }

    @Test
    void the_json_report_is_one_document_with_outcome_phases_and_the_side_by_side_figures() throws Exception {
        JsonNode json = JSON.readTree(report(Decision.REJECTED, "gate failed", 2L).toJson());
        assertEquals("rejected", json.get("outcome").asText());
        assertEquals(3, json.get("modelId").asLong());
        assertEquals(2, json.get("liveModelId").asLong());
        assertEquals(2, json.get("activeModelId").asLong(), "a rejected candidate leaves the live model active");
        assertEquals(2.5, json.at("/phases/fit").asDouble());
        assertEquals(2.62, json.get("totalSeconds").asDouble(), 1e-9);
        assertEquals(400, json.at("/counts/ratings").asInt());
        assertEquals(8, json.at("/params/rank").asInt());
        assertEquals("auto", json.at("/params/promote").asText());
        assertEquals(0.005, json.at("/gate/rmseTolerance").asDouble());
        assertEquals(0.7012, json.at("/figures/candidate/overall/rmse").asDouble());
        assertEquals(0.69, json.at("/figures/live/overall/rmse").asDouble());
        assertEquals(0.081, json.at("/figures/baselines/mostPopular/overall/precision").asDouble());
        assertEquals(1, json.at("/recovered/0").asLong());
        assertTrue(json.get("deleted").isArray());
    }

    @Test
    void a_run_that_stops_is_reported_as_failed_or_locked() throws Exception {
        JsonNode failed = JSON.readTree(MetricsJson.failure(1, "solver broke", 9L, null));
        assertEquals("failed", failed.get("outcome").asText());
        assertEquals(9, failed.get("modelId").asLong());
        assertEquals(1, failed.get("exitCode").asInt());
        RetrainLock.Holder holder = new RetrainLock.Holder("kitchen-1", 4242, "twofold train",
                Instant.parse("2026-12-01T02:00:00Z"), 777, "twofold train 4242@kitchen-1", null);
        JsonNode locked = JSON.readTree(MetricsJson.failure(75, "another retrain is running", null, holder));
        assertEquals("locked", locked.get("outcome").asText());
        assertTrue(locked.get("modelId").isNull());
        assertEquals("kitchen-1", locked.at("/holder/host").asText());
        assertEquals(4242, locked.at("/holder/processId").asLong());
        assertEquals("2026-12-01T02:00:00Z", locked.at("/holder/since").asText());
    }
}
