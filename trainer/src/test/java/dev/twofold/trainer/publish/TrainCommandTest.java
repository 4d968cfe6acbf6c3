package dev.twofold.trainer.publish;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.trainer.fit.Coupling;
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
                "--relevance", "3.5", "--k", "20");
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
    }

    @Test
    void a_bad_setting_is_a_usage_error_that_names_it_before_touching_the_database() {
        assertUsageError("rank -1 outside 0..1024", "--rank", "-1");
        assertUsageError("coupling 'social' is not one of shared, none", "--coupling", "social");
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
