package dev.twofold.db.embedded;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import dev.twofold.db.testing.TestDatabases;
import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStreamReader;
import java.io.PrintWriter;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Statement;
import java.util.List;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.AfterEach;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** The embedded server for real: a cluster on disk, started, joined, stopped, restarted. */
class EmbeddedServerTest {

    /** Bound on how long the helper JVM may take to start and answer. */
    static final long CHILD_TIMEOUT_S = 120;

    @TempDir
    Path dataDir;

    @BeforeAll
    static void shareUnpackedBinaries() {
        // Unpacking takes seconds; production unpacks under each data directory, the tests share one copy.
        System.setProperty(EmbeddedServer.BINARIES_PROPERTY, TestDatabases.sharedBinaries().toString());
    }

    @AfterEach
    void stopLeftovers() {
        DataDirectoryLock.holding(dataDir, () -> {
            EmbeddedServer.readPidFile(dataDir.resolve(EmbeddedServer.CLUSTER_DIR)).ifPresent(p -> {
                ProcessHandle.of(p.pid()).ifPresent(ProcessHandle::destroy);
                ProcessHandle.of(p.pid()).ifPresent(h -> h.onExit().join());
            });
            return null;
        });
    }

    @Test
    void data_survives_closing_and_reopening() throws SQLException {
        try (Database db = Database.open(DatabaseSettings.embedded(dataDir))) {
            assertTrue(db.description().contains("started by this process"), db.description());
            execute(db, "insert into users (external_id) values ('ada'), ('grace')");
        }
        assertFalse(serverRunning(), "the only client closed, so the server stops");
        try (Database db = Database.open(DatabaseSettings.embedded(dataDir))) {
            assertEquals(2, count(db, "users"));
        }
    }

    @Test
    void a_second_database_on_the_same_directory_joins_the_running_server() throws SQLException {
        Database first = Database.open(DatabaseSettings.embedded(dataDir));
        Database second = Database.open(DatabaseSettings.embedded(dataDir));
        try {
            assertEquals(first.jdbcUrl(), second.jdbcUrl(), "same host, port and database");
            assertTrue(second.description().contains("joined"), second.description());
            execute(first, "insert into users (external_id) values ('ada')");

            first.close();
            assertTrue(serverRunning(), "the second client is still connected, so the server stays up");
            assertEquals(1, count(second, "users"));
        } finally {
            first.close();
            second.close();
        }
        assertFalse(serverRunning(), "the last client turns the server off");
    }

    @Test
    void a_pid_file_left_by_a_dead_server_does_not_prevent_starting() throws Exception {
        try (Database db = Database.open(DatabaseSettings.embedded(dataDir))) {
            execute(db, "insert into users (external_id) values ('ada')");
        }
        Process gone = new ProcessBuilder("true").start();
        gone.waitFor();
        Path pidFile = dataDir.resolve(EmbeddedServer.CLUSTER_DIR).resolve("postmaster.pid");
        Files.write(pidFile, List.of(Long.toString(gone.pid()), dataDir.resolve("pg").toString(), "0", "5", "", "127.0.0.1",
                "0 0", "ready   "));
        try (Database db = Database.open(DatabaseSettings.embedded(dataDir))) {
            assertEquals(1, count(db, "users"));
        }
    }

    @Test
    void another_jvm_joins_the_server_and_keeps_it_up_after_the_starter_closes() throws Exception {
        Database starter = Database.open(DatabaseSettings.embedded(dataDir));
        execute(starter, "insert into users (external_id) values ('ada'), ('grace'), ('alan')");
        Process child = new ProcessBuilder(Path.of(System.getProperty("java.home"), "bin", "java").toString(),
                "-D" + EmbeddedServer.BINARIES_PROPERTY + "=" + TestDatabases.sharedBinaries(),
                "-cp", System.getProperty("java.class.path"), JoiningProcess.class.getName(), dataDir.toString())
                .redirectError(ProcessBuilder.Redirect.DISCARD)
                .start();
        try (BufferedReader out = new BufferedReader(new InputStreamReader(child.getInputStream(), StandardCharsets.UTF_8));
             PrintWriter in = new PrintWriter(child.getOutputStream(), true, StandardCharsets.UTF_8)) {
            assertEquals("url=" + starter.jdbcUrl(), out.readLine(), "the child joined the same server");

            starter.close();
            assertTrue(serverRunning(), "the child is connected, so the starter leaves the server running");
            in.println("count");
            assertEquals("users=3", out.readLine());

            in.println("close");
            assertEquals("closed", out.readLine());
            assertTrue(child.waitFor(CHILD_TIMEOUT_S, TimeUnit.SECONDS));
            assertEquals(0, child.exitValue());
        } finally {
            starter.close();
            child.destroyForcibly();
        }
        assertFalse(serverRunning(), "the child was the last client and stopped the server");
    }

    private boolean serverRunning() {
        return EmbeddedServer.readPidFile(dataDir.resolve(EmbeddedServer.CLUSTER_DIR))
                .map(p -> ProcessHandle.of(p.pid()).map(ProcessHandle::isAlive).orElse(false))
                .orElse(false);
    }

    private static void execute(Database db, String sql) throws SQLException {
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement()) {
            s.execute(sql);
        }
    }

    private static long count(Database db, String table) throws SQLException {
        try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement();
             ResultSet rs = s.executeQuery("select count(*) from " + table)) {
            rs.next();
            return rs.getLong(1);
        }
    }
}
