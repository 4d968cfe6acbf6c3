package dev.twofold.trainer.sweep;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.trainer.fit.Coupling;
import dev.twofold.trainer.publish.TrainSettings;
import java.io.PrintWriter;
import java.io.StringWriter;
import org.junit.jupiter.api.Test;
import picocli.CommandLine;

class SweepCommandTest {

    @Test
    void comma_separated_grids_become_the_settings_to_sweep() {
        SweepCommand command = new SweepCommand();
        new CommandLine(command).parseArgs("--ranks", "4,8,16,32,64", "--lambdas", "0.01,0.1", "--out", "/tmp/x",
                "--coupling", "shared", "--solver", "greedy");
        TrainSettings s = command.settings();
        assertArrayEquals(new int[] {4, 8, 16, 32, 64}, s.sweepRanks());
        assertArrayEquals(new float[] {0.01f, 0.1f}, s.sweepLambdas());
        assertEquals(Coupling.SHARED, s.fit().coupling());
        assertEquals("greedy", s.solver().label());
    }

    @Test
    void a_bad_grid_is_a_usage_error_that_names_the_value() {
        assertUsageError("rank 2000 outside 0..1024", "--ranks", "4,2000", "--out", "/tmp/x");
        assertUsageError("lambda -1.0 outside 0..1000000.0", "--lambdas", "-1", "--out", "/tmp/x");
        assertUsageError("patience 0 outside 1..1000", "--patience", "0", "--out", "/tmp/x");
        assertUsageError("Missing required option: '--out=DIR'");
    }

    private static void assertUsageError(String expected, String... args) {
        StringWriter err = new StringWriter();
        CommandLine cli = new CommandLine(new SweepCommand());
        cli.setErr(new PrintWriter(err));
        assertEquals(2, cli.execute(args));
        assertTrue(err.toString().contains(expected), err.toString());
    }
}
