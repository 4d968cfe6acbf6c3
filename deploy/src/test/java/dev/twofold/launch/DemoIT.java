package dev.twofold.launch;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Map;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The README's first command on the embedded default: {@code twofold demo} with no database
 * settings generates data, imports, trains and serves, and the printed request answers.
 */
class DemoIT {

    static final Pattern EXAMPLE_USER = Pattern.compile("/v1/users/([^/]+)/recommendations");
    static final Pattern KEY = Pattern.compile("export TWOFOLD_KEY=(tf_[A-Za-z0-9_-]{43})\\s");

    @TempDir
    Path work;

    @Test
    void demo_on_the_embedded_database_serves_the_requests_it_prints() throws Exception {
        int port = LauncherProcess.freePort();
        Path dataDir = work.resolve("data");
        Map<String, String> env = Map.of("TWOFOLD_DATA_DIR", dataDir.toString(), "TWOFOLD_HTTP_PORT",
                Integer.toString(port));
        HttpClient http = HttpClient.newHttpClient();
        try (LauncherProcess demo = LauncherProcess.start(env, work, "demo", "--users", "300", "--items", "120")) {
            demo.awaitReady(http, "http://127.0.0.1:" + port + "/health/ready");
            Matcher m = EXAMPLE_USER.matcher(demo.stdout());
            assertTrue(m.find(), "the demo prints an example request\n" + demo.describe());
            Matcher key = KEY.matcher(demo.stdout());
            assertTrue(key.find(), "the demo prints the key to use\n" + demo.describe());
            assertTrue(demo.stdout().contains("-H \"Authorization: Bearer $TWOFOLD_KEY\""), demo.stdout());
            URI example = URI.create("http://127.0.0.1:" + port + "/v1/users/" + m.group(1) + "/recommendations?count=5");
            HttpResponse<String> anonymous = http.send(HttpRequest.newBuilder(example).build(),
                    HttpResponse.BodyHandlers.ofString());
            assertEquals(401, anonymous.statusCode(), "the demo serves with keys checked: " + anonymous.body());
            HttpResponse<String> r = http.send(HttpRequest.newBuilder(example).header("Authorization", "Bearer "
                    + key.group(1)).build(), HttpResponse.BodyHandlers.ofString());
            assertEquals(200, r.statusCode(), r.body());
            JsonNode body = new ObjectMapper().readTree(r.body());
            assertEquals(5, body.get("items").size(), r.body());
            assertEquals("model", body.get("strategy").asText());
            HttpResponse<String> wrote = http.send(HttpRequest.newBuilder(URI.create("http://127.0.0.1:" + port
                    + "/v1/ratings")).header("Authorization", "Bearer " + key.group(1))
                    .header("Content-Type", "application/json").POST(HttpRequest.BodyPublishers.ofString(
                            "[{\"user\": \"" + m.group(1) + "\", \"item\": \"demo-it-recipe\", \"rating\": 4}]")).build(),
                    HttpResponse.BodyHandlers.ofString());
            assertEquals(202, wrote.statusCode(), "the demo key may send ratings: " + wrote.body());

            assertEquals(LauncherProcess.EXIT_AFTER_SIGTERM, demo.terminate(), demo.describe());
            assertTrue(demo.stderr().contains("stopped embedded PostgreSQL"),
                    "the embedded server this demo started is stopped with it\n" + demo.describe());
        }
        assertTrue(Files.isDirectory(dataDir), "the data directory is kept for the next run");
    }
}
