package dev.twofold.trainer.publish;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.trainer.evaluate.Figures;
import org.junit.jupiter.api.Test;

class QualityGateTest {

    private static final QualityGate GATE = new QualityGate(0.01, 0.05);
    private static final int K = 10;
    private static final long LIVE_ID = 4;

    private static Figures figures(double rmse, double precision) {
        return new Figures(100, rmse, rmse * 0.8, 40, precision, 0.2, 0.3, 0.2, 0.5);
    }

    @Test
    void with_no_live_model_the_gate_passes() {
        QualityGate.Verdict v = GATE.judge(figures(0.9, 0.1), null, 0, K);
        assertTrue(v.passes());
        assertEquals("no model is live", v.reason());
    }

    @Test
    void a_candidate_within_both_tolerances_passes_and_the_reason_shows_the_arithmetic() {
        // RMSE limit 0.9 × 1.01 = 0.909; precision floor 0.1 × 0.95 = 0.095
        QualityGate.Verdict v = GATE.judge(figures(0.9089, 0.0951), figures(0.9, 0.1), LIVE_ID, K);
        assertTrue(v.passes(), v.reason());
        assertEquals("held-out RMSE 0.9089 ≤ live model 4's 0.9000 × 1.010 = 0.9090; precision@10 0.0951 ≥ live model 4's"
                + " 0.1000 × 0.950 = 0.0950", v.reason());
    }

    @Test
    void a_candidate_worse_in_rmse_beyond_the_tolerance_fails() {
        QualityGate.Verdict v = GATE.judge(figures(0.9091, 0.2), figures(0.9, 0.1), LIVE_ID, K);
        assertFalse(v.passes());
        assertEquals("held-out RMSE 0.9091 is above live model 4's 0.9000 × 1.010 = 0.9090", v.reason());
    }

    @Test
    void a_candidate_lower_in_precision_beyond_the_tolerance_fails_even_with_a_better_rmse() {
        QualityGate.Verdict v = GATE.judge(figures(0.5, 0.0949), figures(0.9, 0.1), LIVE_ID, K);
        assertFalse(v.passes());
        assertEquals("precision@10 0.0949 is below live model 4's 0.1000 × 0.950 = 0.0950", v.reason());
    }

    @Test
    void a_figure_the_live_model_lacks_does_not_block_but_one_the_candidate_lacks_does() {
        assertTrue(GATE.judge(figures(0.9, 0.1), figures(0.9, Double.NaN), LIVE_ID, K).passes());
        assertFalse(GATE.judge(figures(0.9, Double.NaN), figures(0.9, 0.1), LIVE_ID, K).passes());
        QualityGate.Verdict nothing = GATE.judge(figures(0.9, 0.1), figures(Double.NaN, Double.NaN), LIVE_ID, K);
        assertTrue(nothing.passes());
        assertEquals("live model 4 has no held-out figures on these rows to compare with", nothing.reason());
    }

    @Test
    void tolerances_outside_zero_to_one_are_refused() {
        assertThrows(IllegalArgumentException.class, () -> new QualityGate(-0.1, 0.05));
        assertThrows(IllegalArgumentException.class, () -> new QualityGate(0.01, 1.5));
        assertThrows(IllegalArgumentException.class, () -> new QualityGate(Double.NaN, 0.05));
    }
}
