package dev.twofold.trainer.publish;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.twofold.db.TwofoldException;
import dev.twofold.db.connect.Database;
import dev.twofold.db.registry.ModelFactors;
import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.registry.ModelRegistry;
import dev.twofold.db.testing.TestDatabases;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.util.BitSet;
import java.util.Map;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.MethodOrderer;
import org.junit.jupiter.api.Order;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.TestMethodOrder;
import picocli.CommandLine;

/** {@code twofold models} against a real PostgreSQL holding a few versions. */
@TestMethodOrder(MethodOrderer.OrderAnnotation.class)
class ModelsCommandTest {

    private static final ObjectMapper JSON = new ObjectMapper();
    private static final String METRICS = "{\"k\":10,\"model\":{\"overall\":{\"rmse\":0.91234,\"precision\":0.0812},"
            + "\"cold\":{\"rmse\":1.1}},\"live\":{\"overall\":{\"rmse\":0.95},\"cold\":{}},\"comparison\":{\"activeModelId\":1},"
            + "\"baselines\":{\"globalMean\":{\"overall\":{\"rmse\":1.2},\"cold\":{}}}}";

    private static Database database;
    private static Map<String, String> env;
    private static long first;
    private static long second;
    private static long rejected;

    @BeforeAll
    static void threeVersions() {
        database = TestDatabases.fresh();
        env = TestDatabases.environment(database);
        ModelRegistry registry = new ModelRegistry(database);
        first = finished(registry, "candidate", null);
        second = finished(registry, "candidate", null);
        rejected = finished(registry, "rejected", "quality gate failed: held-out RMSE 0.9900 is above live model 2's 0.9100");
        registry.promote(first);
        registry.promote(second);
    }

    @AfterAll
    static void close() {
        database.close();
    }

    @Test
    @Order(1)
    void list_shows_every_version_newest_first_with_its_figures_and_the_pointers() {
        Run run = run("list");
        assertEquals(0, run.exit, run.err);
        String[] lines = run.out.split("\n");
        assertTrue(lines[0].matches("\\s*ID\\s+STATUS\\s+CREATED\\s+RANK\\s+COUPLING\\s+RMSE\\s+PREC@K\\s+POINTER\\s+REASON"),
                lines[0]);
        assertTrue(lines[1].matches("\\s*" + rejected + "\\s+rejected\\s+.*0\\.9123\\s+0\\.0812@10\\s+quality gate failed.*"),
                lines[1]);
        assertTrue(lines[2].matches("\\s*" + second + "\\s+active\\s+.*\\s+live\\s*"), lines[2]);
        assertTrue(lines[3].matches("\\s*" + first + "\\s+retired\\s+.*\\s+rollback target\\s*"), lines[3]);
    }

    @Test
    @Order(2)
    void list_json_has_the_pointers_and_the_versions_in_the_shape_of_the_http_api() throws Exception {
        Run run = run("list", "--json");
        JsonNode json = JSON.readTree(run.out);
        assertEquals(second, json.get("active").asLong());
        assertEquals(first, json.get("previous").asLong());
        assertEquals(3, json.get("models").size());
        JsonNode newest = json.get("models").get(0);
        assertEquals(rejected, newest.get("id").asLong());
        assertEquals("rejected", newest.get("status").asText());
        assertEquals(0.91234, newest.at("/metrics/model/overall/rmse").asDouble());
        assertEquals(3, newest.at("/params/rank").asInt());
        assertTrue(newest.get("reason").asText().startsWith("quality gate failed"));
    }

    @Test
    @Order(3)
    void show_prints_the_version_with_its_figures_beside_the_live_model_of_the_time() throws Exception {
        Run run = run("show", Long.toString(rejected));
        assertEquals(0, run.exit, run.err);
        assertTrue(run.out.startsWith("model " + rejected + ": rejected\n"), run.out);
        assertTrue(run.out.contains("reason: quality gate failed"), run.out);
        assertTrue(run.out.matches("(?s).*this model\\s+0\\.9123\\s+-\\s+0\\.0812.*"), run.out);
        assertTrue(run.out.matches("(?s).*live then \\(1\\)\\s+0\\.9500.*"), run.out);
        assertTrue(run.out.matches("(?s).*global mean\\s+1\\.2000.*"), run.out);
        assertEquals(rejected, JSON.readTree(run("show", Long.toString(rejected), "--json").out).get("id").asLong());
    }

    @Test
    @Order(4)
    void promoting_a_rejected_version_by_hand_works_and_says_it_had_been_rejected() throws Exception {
        Run run = run("promote", Long.toString(rejected));
        assertEquals(0, run.exit, run.err);
        assertTrue(run.out.startsWith("model " + rejected + " is now active (model " + second + " retired"), run.out);
        assertTrue(run.out.contains("note: it had been rejected: quality gate failed"), run.out);
        ModelRegistry registry = new ModelRegistry(database);
        assertEquals(rejected, registry.active().orElseThrow().id());
        assertTrue(run("promote", Long.toString(rejected)).out.contains("was already active; nothing changed"));
    }

    @Test
    @Order(5)
    void rollback_returns_to_the_previous_model_and_json_gives_the_pointers() throws Exception {
        Run run = run("rollback", "--json");
        assertEquals(0, run.exit, run.err);
        JsonNode json = JSON.readTree(run.out);
        assertEquals(second, json.get("active").asLong());
        assertEquals(rejected, json.get("previous").asLong());
        assertEquals(second, new ModelRegistry(database).active().orElseThrow().id());
        Run text = run("rollback");
        assertTrue(text.out.startsWith("model " + rejected + " is active again (model " + second + " retired"), text.out);
    }

    @Test
    @Order(6)
    void an_unknown_or_unpromotable_version_exits_65_and_changes_nothing() {
        Run unknown = run("promote", "999999");
        assertEquals(TwofoldException.EXIT_DATA_ERROR, unknown.exit);
        assertTrue(unknown.err.contains("there is no model 999999"), unknown.err);
        long failed = finished(new ModelRegistry(database), "failed", "boom");
        Run refused = run("promote", Long.toString(failed));
        assertEquals(TwofoldException.EXIT_DATA_ERROR, refused.exit);
        assertTrue(refused.err.contains("is failed and cannot be promoted"), refused.err);
        assertEquals(rejected, new ModelRegistry(database).active().orElseThrow().id());
        assertEquals(2, run().exit, "models without a subcommand is a usage error");
    }

    @Test
    @Order(7)
    void prune_applies_retention_but_keeps_the_active_and_rollback_versions() throws Exception {
        JsonNode json = JSON.readTree(run("prune", "--keep", "1", "--json").out);
        ModelRegistry registry = new ModelRegistry(database);
        // newest: the failed one (kept); active: rejected; previous: second; first is deleted
        assertEquals(first, json.at("/deleted/0").asLong());
        assertEquals(1, json.get("deleted").size());
        assertEquals(3, registry.list().size());
        assertEquals("nothing to delete", run("prune", "--keep", "1").out.trim());
    }

    private record Run(int exit, String out, String err) {
    }

    private static Run run(String... args) {
        StringWriter out = new StringWriter();
        StringWriter err = new StringWriter();
        CommandLine cli = new CommandLine(new ModelsCommand(env));
        cli.setOut(new PrintWriter(out));
        cli.setErr(new PrintWriter(err));
        cli.setExecutionExceptionHandler((e, cmd, parsed) -> {
            cmd.getErr().println(e.getMessage());
            return e instanceof TwofoldException t ? t.exitCode() : 1;
        });
        int exit = cli.execute(args);
        return new Run(exit, out.toString(), err.toString());
    }

    private static long finished(ModelRegistry registry, String status, String reason) {
        long id = registry.create(new ModelHeader(0, "training", 3, "none", 0.05f, 0f, 0f, 1f, 5f, 3.5f, 1, 1, null, null,
                "{\"rank\":3}", null, "{\"ratings\":10}", null));
        if (!status.equals("failed")) {
            BitSet one = new BitSet();
            one.set(0);
            registry.storeFactors(id, new ModelFactors(3, new float[] {0.1f, 0.2f, 0.3f}, new float[] {0f}, one,
                    new float[] {0.3f, 0.2f, 0.1f}, new float[] {0f}, new float[] {1f}, one, null));
        }
        registry.finish(id, status, status.equals("failed") ? null : METRICS, reason);
        return id;
    }
}
