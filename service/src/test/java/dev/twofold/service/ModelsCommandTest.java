package dev.twofold.service;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.TwofoldException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.service.testing.KitchenDatabase;
import dev.twofold.service.testing.TwoTastes;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.nio.file.Path;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import picocli.CommandLine;

class ModelsCommandTest {

    @TempDir
    static Path dir;
    private static Database db;
    private static long first;

    @BeforeAll
    static void publish() {
        db = TestDatabases.fresh();
        KitchenDatabase.importRatings(db, dir);
        first = KitchenDatabase.publishModel(db);
    }

    @AfterAll
    static void close() {
        db.close();
    }

    /** Runs {@code twofold models ARGS} as the launcher does (failures map to their exit codes); returns code, out, err. */
    private static String[] run(String... args) {
        CommandLine cli = new CommandLine(new ModelsCommand(TestDatabases.environment(db)));
        cli.setExecutionExceptionHandler((e, cmd, parsed) -> {
            cmd.getErr().println(e.getMessage());
            return e instanceof TwofoldException t ? t.exitCode() : 1;
        });
        StringWriter out = new StringWriter();
        StringWriter err = new StringWriter();
        cli.setOut(new PrintWriter(out));
        cli.setErr(new PrintWriter(err));
        int code = cli.execute(args);
        return new String[] {Integer.toString(code), out.toString(), err.toString()};
    }

    @Test
    void promote_and_rollback_move_the_active_pointer_and_list_shows_it() {
        long second = TwoTastes.copyActiveAsCandidate(db);
        String[] promoted = run("promote", Long.toString(second));
        assertEquals("0", promoted[0], promoted[2]);
        assertTrue(promoted[1].contains("model " + second + " is active") && promoted[1].contains("model " + first),
                promoted[1]);
        assertEquals(second, new ModelRegistry(db).active().orElseThrow().id());

        String[] listed = run("list");
        assertEquals("0", listed[0], listed[2]);
        String[] lines = listed[1].split("\n");
        assertTrue(lines[0].contains("status") && lines[0].contains("RMSE"), lines[0]);
        assertTrue(lines[1].trim().startsWith(second + "  active"), lines[1]);
        assertTrue(lines[2].trim().startsWith(first + "  retired"), lines[2]);

        String[] rolled = run("rollback");
        assertEquals("0", rolled[0], rolled[2]);
        assertTrue(rolled[1].contains("model " + first + " is active again"), rolled[1]);
        assertEquals(first, new ModelRegistry(db).active().orElseThrow().id());

        String[] shown = run("show", Long.toString(first));
        assertEquals("0", shown[0], shown[2]);
        assertTrue(shown[1].startsWith("model " + first + ": active"), shown[1]);
    }

    @Test
    void an_unknown_version_or_a_missing_subcommand_is_refused_with_the_contract_exit_codes() {
        String[] unknown = run("promote", "999999");
        assertEquals(Integer.toString(TwofoldException.EXIT_DATA_ERROR), unknown[0]);
        assertTrue(unknown[2].contains("999999"), unknown[2]);
        assertEquals(Integer.toString(TwofoldException.EXIT_DATA_ERROR), run("show", "999999")[0]);
        assertEquals(Integer.toString(TwofoldException.EXIT_USAGE), run()[0]);
        assertEquals(Integer.toString(TwofoldException.EXIT_USAGE), run("promote", "seven")[0]);
    }
}
