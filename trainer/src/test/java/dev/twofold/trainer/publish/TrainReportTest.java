package dev.twofold.trainer.publish;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.twofold.trainer.evaluate.BaselineFigures;
import dev.twofold.trainer.evaluate.Figures;
import dev.twofold.trainer.evaluate.SegmentFigures;
import dev.twofold.trainer.fit.EpochReport;
import dev.twofold.trainer.sweep.SweepPoint;
import dev.twofold.trainer.sweep.SweepResult;
import java.time.Duration;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;

class TrainReportTest {

    private static final Figures ERRORS = new Figures(100, 0.8123, 0.6, 0, Double.NaN, Double.NaN, Double.NaN, Double.NaN,
            Double.NaN);
    private static final Figures FULL = new Figures(100, 0.7012, 0.5, 40, 0.123, 0.2, 0.3, 0.25, 0.6);
    private static final Figures RANKING = new Figures(0, Double.NaN, Double.NaN, 40, 0.081, 0.1, 0.2, 0.15, 0.05);

    private static TrainReport report(Decision decision, String reason, Long active) {
        Map<String, Duration> phases = new LinkedHashMap<>();
        phases.put("read", Duration.ofMillis(120));
        phases.put("fit", Duration.ofMillis(2500));
        return new TrainReport(3, decision, reason, new TrainReport.Counts(50, 20, 400, 90, 320, 80, 7), phases, 10,
                new SegmentFigures(FULL, FULL),
                new BaselineFigures(new SegmentFigures(ERRORS, ERRORS), new SegmentFigures(FULL, FULL),
                        new SegmentFigures(RANKING, RANKING), null),
                active, active == null ? Double.NaN : 0.69, List.of(new EpochReport(1, 123.4, Double.NaN, 0)), null, null);
    }

    private static TrainReport tuned() {
        TrainReport r = report(Decision.PROMOTED, null, null);
        SweepResult sweep = new SweepResult(List.of(new SweepPoint(4, 0.02f, 0.91, 0.05, 7, 9, 1.5),
                new SweepPoint(8, 0.02f, 0.88, 0.06, 12, 14, 2.5)), 10);
        return new TrainReport(r.modelId(), r.decision(), r.reason(), r.counts(), r.phases(), r.k(), r.model(),
                r.baselines(), r.activeModelId(), r.activeRmse(), r.history(), "no --rank given: " + sweep.why(), sweep);
    }

    @Test
    void a_tuned_report_says_what_was_chosen_and_keeps_the_sweep_in_its_metrics() throws Exception {
        TrainReport report = tuned();
        assertTrue(report.summary().contains("tuning: no --rank given: chose rank 8, lambda 0.02: lowest validation "
                + "RMSE 0.8800 of 2 settings"), report.summary());
        TrainSettings chosen = TrainSettings.defaults().withFit(TrainSettings.defaults().fit().withRank(8).withEpochs(12));
        JsonNode json = new ObjectMapper().readTree(MetricsJson.metrics(report, chosen));
        assertEquals(8, json.at("/tuning/chosen/rank").asInt());
        assertEquals(12, json.at("/tuning/chosen/epochs").asInt());
        assertEquals(2, json.at("/tuning/sweep").size());
        assertEquals(0.91, json.at("/tuning/sweep/0/validationRmse").asDouble(), 0.0);
    }

    @Test
    void summary_shows_counts_times_figures_against_baselines_and_the_decision() {
        String text = report(Decision.PROMOTED, null, null).summary();
        assertTrue(text.contains("model 3: promoted to active"), text);
        assertTrue(text.contains("400 ratings (320 train, 80 held out), 90 trust edges"), text);
        assertTrue(text.contains("fit 2.50s"), text);
        assertTrue(text.contains("prec@10"), text);
        assertTrue(text.matches("(?s).*model\\s+0\\.7012\\s+0\\.5000\\s+0\\.1230.*"), text);
        assertTrue(text.matches("(?s).*global mean\\s+0\\.8123\\s+0\\.6000\\s+-.*"), text);
        assertTrue(text.matches("(?s).*most popular\\s+-\\s+-\\s+0\\.0810.*"), text);
        assertTrue(!text.contains("without trust"), "no row for a baseline that was not run");
    }

    @Test
    void a_rejection_names_the_reason_and_the_active_model() {
        String text = report(Decision.REJECTED, "held-out RMSE 0.7012 is worse", 2L).summary();
        assertTrue(text.contains("not promoted (held-out RMSE 0.7012 is worse)"), text);
        assertTrue(text.contains("active model 2 on the same rows: RMSE 0.6900"), text);
    }

    @Test
    void metrics_json_keeps_figures_and_writes_missing_ones_as_null() throws Exception {
        JsonNode json = new ObjectMapper().readTree(MetricsJson.metrics(report(Decision.PROMOTED, null, null),
                TrainSettings.defaults()));
        assertTrue(json.at("/model/overall/rmse").asDouble() == 0.7012);
        assertTrue(json.at("/baselines/globalMean/overall/precision").isNull());
        assertTrue(json.at("/baselines/withoutTrust").isNull());
        assertTrue(json.at("/comparison/decision").asText().equals("promoted"));
        assertTrue(json.at("/training/epochs").asInt() == 1);
        assertTrue(json.at("/tuning").isNull());
    }
}
