package dev.twofold.launch;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.concurrent.TimeUnit;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The soak script as CI can afford it: {@code deploy/soak} for 20 s on a small community, on the
 * shaded jar. It prepares, serves on loopback, drives mixed traffic with a write key, stops the
 * service it started and checks every acknowledged write with SQL; this test reads its report.
 * (The 10-minute run and its figures are in docs/benchmarks.md.)
 */
class SoakIT {

    /** The script's own bounds (set-up, the 20 s of load, stopping, checking) with room for a slow machine. */
    static final long SCRIPT_TIMEOUT_MINUTES = 12;
    static final Pattern FOUND = Pattern.compile("acknowledged writes found in the database: (\\d+) of (\\d+)");

    @TempDir
    Path tmp;

    @Test
    void a_short_soak_serves_without_5xx_and_every_acknowledged_write_is_in_the_database() throws Exception {
        Path script = Path.of("soak").toAbsolutePath();
        Path log = tmp.resolve("soak.log");
        ProcessBuilder soak = new ProcessBuilder("bash", script.toString(), "--users", "300", "--items", "120", "--threads", "4",
                "20s").redirectErrorStream(true).redirectOutput(log.toFile());
        soak.environment().put("TWOFOLD_JAR", LauncherProcess.jar().toString());
        soak.environment().put("TMPDIR", tmp.toString());
        Process p = soak.start();
        boolean ended = p.waitFor(SCRIPT_TIMEOUT_MINUTES, TimeUnit.MINUTES);
        if (!ended) {
            p.destroy(); // the script's EXIT trap stops the service it started
            p.waitFor(1, TimeUnit.MINUTES);
        }
        String out = read(log);
        assertTrue(ended, "deploy/soak did not finish within " + SCRIPT_TIMEOUT_MINUTES + " minutes:\n" + out);
        assertEquals(0, p.exitValue(), out);
        assertTrue(out.contains("\n5xx: 0\n"), out);
        assertTrue(out.contains("\ntransport failures: 0\n"), out);
        Matcher found = FOUND.matcher(out);
        assertTrue(found.find(), out);
        assertEquals(found.group(2), found.group(1), out);
        assertTrue(Long.parseLong(found.group(1)) > 0, "some writes were acknowledged: " + out);
        assertTrue(out.contains("live heap after full GC"), out);
        assertTrue(out.trim().endsWith("soak: PASS"), out);
        try (var left = Files.list(tmp)) {
            assertEquals(1, left.count(), "only the log is left; the soak directory was removed");
        }
    }

    private static String read(Path log) throws IOException {
        return Files.exists(log) ? Files.readString(log, StandardCharsets.UTF_8) : "";
    }
}
