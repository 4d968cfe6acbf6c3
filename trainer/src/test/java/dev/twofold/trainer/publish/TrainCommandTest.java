package dev.twofold.trainer.publish;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.fit.SolverKind;
import dev.twofold.trainer.split.SplitMethod;
import dev.twofold.trainer.sweep.Sweep;
import java.io.PrintWriter;
import java.io.StringWriter;
import org.junit.jupiter.api.Test;
import picocli.CommandLine;

class TrainCommandTest {

    @Test
    void options_become_validated_settings() {
        TrainCommand command = new TrainCommand();
        new CommandLine(command).parseArgs("--rank", "12", "--lambda", "0.1", "--trust-weight", "0.3", "--trust-alpha", "5",
                "--epochs", "7", "--seed", "9", "--holdout", "0.25", "--threads", "2", "--coupling", "none",
                "--relevance", "3.5", "--k", "20", "--solver", "ccd", "--split", "time", "--patience", "4");
        TrainSettings s = command.settings();
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
    void a_bad_setting_is_a_usage_error_that_names_it_before_touching_the_database() {
        assertUsageError("rank -1 outside 0..1024", "--rank", "-1");
        assertUsageError("coupling 'social' is not one of shared, neighbour, none", "--coupling", "social");
        assertUsageError("solver 'sgd' is not one of als, ccd, greedy", "--solver", "sgd");
        assertUsageError("split 'random' is not one of user, time", "--split", "random");
        assertUsageError("patience -1 outside 0..1000", "--patience", "-1");
        assertUsageError("holdout 0.95 outside 0.01..0.9", "--holdout", "0.95");
        assertUsageError("relevance threshold 6.0 outside the rating scale 1.0..5.0", "--relevance", "6");
    }

    private static void assertUsageError(String expected, String... args) {
        StringWriter err = new StringWriter();
        CommandLine cli = new CommandLine(new TrainCommand());
        cli.setErr(new PrintWriter(err));
        assertEquals(2, cli.execute(args));
        assertTrue(err.toString().contains(expected), err.toString());
    }
}
