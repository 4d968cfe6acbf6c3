package dev.twofold.trainer.publish;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.registry.Retention;
import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.fit.SolverKind;
import dev.twofold.trainer.split.SplitMethod;
import dev.twofold.trainer.sweep.Sweep;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.util.Map;
import org.junit.jupiter.api.Test;
import picocli.CommandLine;

class TrainCommandTest {

    @Test
    void options_become_validated_settings() {
        TrainCommand command = new TrainCommand();
        new CommandLine(command).parseArgs("--rank", "12", "--lambda", "0.1", "--trust-weight", "0.3", "--trust-alpha", "5",
                "--epochs", "7", "--seed", "9", "--holdout", "0.25", "--threads", "2", "--coupling", "none",
                "--relevance", "3.5", "--k", "20", "--solver", "ccd", "--split", "time", "--patience", "4",
                "--bias-prior", "1.5");
        TrainSettings s = command.settings();
        assertEquals(1.5f, s.fit().biasPrior());
        assertEquals(12, s.fit().rank());
        assertEquals(0.1f, s.fit().lambda());
        assertEquals(0.3f, s.fit().trustWeight());
        assertEquals(5f, s.fit().trustAlpha());
        assertEquals(7, s.fit().epochs());
        assertEquals(9, s.fit().seed());
        assertEquals(2, s.fit().threads());
        assertEquals(Coupling.NONE, s.fit().coupling());
        assertEquals(0.25, s.holdout());
        assertEquals(3.5f, s.relevance());
        assertEquals(20, s.k());
        assertEquals(SolverKind.CCD, s.solver());
        assertEquals(SplitMethod.TIME, s.split());
        assertEquals(4, s.patience());
        assertFalse(s.sweeps(), "rank and lambda were given");
    }

    @Test
    void without_rank_and_lambda_train_sweeps_both_and_the_trust_weight_follows_the_coupling() {
        TrainCommand command = new TrainCommand();
        new CommandLine(command).parseArgs("--coupling", "neighbour");
        TrainSettings s = command.settings();
        assertTrue(s.sweeps());
        assertArrayEquals(Sweep.DEFAULT_RANKS, s.sweepRanks());
        assertArrayEquals(Sweep.DEFAULT_LAMBDAS, s.sweepLambdas());
        assertEquals(Coupling.NEIGHBOUR.defaultTrustWeight(), s.fit().trustWeight());

        command = new TrainCommand();
        new CommandLine(command).parseArgs("--rank", "6", "--coupling", "shared");
        s = command.settings();
        assertArrayEquals(new int[0], s.sweepRanks());
        assertArrayEquals(Sweep.DEFAULT_LAMBDAS, s.sweepLambdas());
        assertEquals(Coupling.SHARED.defaultTrustWeight(), s.fit().trustWeight());
    }

    @Test
    void promotion_options_become_publish_settings_and_keep_falls_back_to_the_environment() {
        TrainCommand command = new TrainCommand(Map.of(Retention.ENV_KEEP, "7"));
        new CommandLine(command).parseArgs("--promote", "never", "--rmse-tolerance", "0.02", "--precision-tolerance", "0.1");
        PublishSettings p = command.publishSettings();
        assertEquals(PromotionPolicy.NEVER, p.policy());
        assertEquals(0.02, p.gate().rmseTolerance());
        assertEquals(0.1, p.gate().precisionTolerance());
        assertEquals(7, p.retention().keep());

        TrainCommand explicit = new TrainCommand(Map.of(Retention.ENV_KEEP, "7"));
        new CommandLine(explicit).parseArgs("--keep", "3");
        assertEquals(3, explicit.publishSettings().retention().keep());

        TrainCommand defaults = new TrainCommand(Map.of());
        new CommandLine(defaults).parseArgs();
        assertEquals(PublishSettings.defaults(), defaults.publishSettings());
    }

    @Test
    void help_states_the_gate_defaults_and_the_exit_codes() {
        StringWriter out = new StringWriter();
        CommandLine cli = new CommandLine(new TrainCommand(Map.of()));
        cli.setOut(new PrintWriter(out));
        assertEquals(0, cli.execute("--help"));
        String help = out.toString().replaceAll("\\s+", " ");
        assertTrue(help.contains("(default: 0.005, 0.5 percent)"), help);
        assertTrue(help.contains("(default: 0.03, 3 percent)"), help);
        assertTrue(help.contains("(default: auto)"), help);
        assertTrue(help.contains("75 another retrain is running"), help);
    }

    @Test
    void a_bad_setting_is_a_usage_error_that_names_it_before_touching_the_database() {
        assertUsageError("rank -1 outside 0..1024", "--rank", "-1");
        assertUsageError("coupling 'social' is not one of shared, neighbour, none", "--coupling", "social");
        assertUsageError("solver 'sgd' is not one of als, ccd, greedy", "--solver", "sgd");
        assertUsageError("split 'random' is not one of user, time", "--split", "random");
        assertUsageError("patience -1 outside 0..1000", "--patience", "-1");
        assertUsageError("bias prior -1.0 outside 0..1000000.0", "--bias-prior", "-1");
        assertUsageError("holdout 0.95 outside 0.01..0.9", "--holdout", "0.95");
        assertUsageError("relevance threshold 6.0 outside the rating scale 1.0..5.0", "--relevance", "6");
        assertUsageError("promote 'sometimes' is not one of auto, never, always", "--promote", "sometimes");
        assertUsageError("RMSE tolerance 2.0 outside 0..1", "--rmse-tolerance", "2");
        assertUsageError("keep 0 outside 1..10000", "--keep", "0");
    }

    private static void assertUsageError(String expected, String... args) {
        StringWriter err = new StringWriter();
        CommandLine cli = new CommandLine(new TrainCommand(Map.of()));
        cli.setErr(new PrintWriter(err));
        assertEquals(2, cli.execute(args));
        assertTrue(err.toString().contains(expected), err.toString());
    }
}
