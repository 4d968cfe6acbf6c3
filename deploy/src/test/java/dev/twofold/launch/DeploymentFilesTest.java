package dev.twofold.launch;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.MappingIterator;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.dataformat.yaml.YAMLFactory;
import dev.twofold.db.TwofoldException;
import dev.twofold.db.connect.DatabaseSettings;
import dev.twofold.db.registry.Retention;
import dev.twofold.service.ServiceSettings;
import dev.twofold.trainer.publish.TrainCommand;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;
import picocli.CommandLine;

/**
 * The deployment files under {@code deploy/} (container, compose, Kubernetes, systemd, cron) parse
 * and agree with the code and with each other. No Docker engine or cluster runs here: this checks
 * syntax and consistency only — the variable names Twofold reads, the probe paths the service
 * answers (openapi.yaml), where the jar is built and where the launcher looks for it, and that every
 * scheduled {@code train} command line is one the train command accepts.
 */
class DeploymentFilesTest {

    /** Maven runs tests in the module directory: deploy/. */
    static final Path DEPLOY = Path.of("").toAbsolutePath();
    static final Path OPENAPI = DEPLOY.resolveSibling("openapi.yaml");
    static final ObjectMapper YAML = new ObjectMapper(new YAMLFactory());
    static final ObjectMapper JSON = new ObjectMapper();
    /** Every variable Twofold's code reads. */
    static final Set<String> READ_BY_TWOFOLD = Set.of(DatabaseSettings.ENV_URL, DatabaseSettings.ENV_USER,
            DatabaseSettings.ENV_PASSWORD, DatabaseSettings.ENV_DATA_DIR, DatabaseSettings.ENV_POOL_SIZE,
            ServiceSettings.HOST_VARIABLE, ServiceSettings.PORT_VARIABLE, Retention.ENV_KEEP);
    /** Read by the launcher script deploy/twofold, not by Java. */
    static final String LAUNCHER_JAR_VARIABLE = "TWOFOLD_JAR";
    static final Pattern TWOFOLD_VARIABLE = Pattern.compile("\\bTWOFOLD_[A-Z_]+\\b");
    static final String INSTALLED_LAUNCHER = "/opt/twofold/twofold";
    static final String INSTALLED_JAR = "/opt/twofold/twofold.jar";
    static final String LIVE_PATH = "/health/live";
    static final String READY_PATH = "/health/ready";
    static final Set<String> DB_VARIABLES = Set.of(DatabaseSettings.ENV_URL, DatabaseSettings.ENV_USER,
            DatabaseSettings.ENV_PASSWORD);

    @Test
    void every_yaml_and_json_file_under_deploy_parses() throws IOException {
        List<Path> files = deploymentFiles(".yaml", ".yml", ".json");
        for (Path f : files) {
            if (f.toString().endsWith(".json")) {
                assertNotNull(JSON.readTree(f.toFile()), f.toString());
            } else {
                List<JsonNode> docs = yamlDocuments(f);
                assertFalse(docs.isEmpty(), f + " has no document");
                for (JsonNode d : docs) {
                    assertTrue(d.isObject(), f + ": every document is a mapping");
                }
            }
        }
        List<String> names = files.stream().map(f -> DEPLOY.relativize(f).toString()).toList();
        for (String mine : List.of("compose.yaml", "kubernetes/api.yaml", "kubernetes/retrain-cronjob.yaml",
                "kubernetes/secret.example.yaml", "kubernetes/kustomization.yaml")) {
            assertTrue(names.contains(mine), mine + " among " + names);
        }
    }

    @Test
    void every_twofold_variable_the_files_set_is_one_twofold_reads() throws IOException {
        String launcher = read(DEPLOY.resolve("twofold"));
        assertTrue(launcher.contains(LAUNCHER_JAR_VARIABLE));
        List<Path> files = deploymentFiles(".yaml", ".yml", ".service", ".timer", ".cron", ".example", "Dockerfile");
        assertTrue(files.size() >= 10, files.toString());
        for (Path f : files) {
            Matcher m = TWOFOLD_VARIABLE.matcher(read(f));
            while (m.find()) {
                String name = m.group();
                assertTrue(READ_BY_TWOFOLD.contains(name) || name.equals(LAUNCHER_JAR_VARIABLE),
                        f + " sets " + name + ", which Twofold does not read");
            }
        }
    }

    @Test
    void the_api_deployment_probes_paths_the_service_answers_on_the_port_it_listens_on() throws IOException {
        JsonNode deployment = kind(DEPLOY.resolve("kubernetes/api.yaml"), "Deployment");
        JsonNode pod = deployment.at("/spec/template");
        JsonNode selector = deployment.at("/spec/selector/matchLabels");
        for (String label : fieldNames(selector)) {
            assertEquals(selector.get(label), pod.at("/metadata/labels").get(label), "the selector picks the pod: " + label);
        }
        JsonNode container = pod.at("/spec/containers/0");
        assertEquals("serve", container.at("/args/0").asText());
        Map<String, JsonNode> env = env(container);
        int port = container.at("/ports/0/containerPort").asInt();
        assertEquals(Integer.toString(port), env.get(ServiceSettings.PORT_VARIABLE).get("value").asText());
        String portName = container.at("/ports/0/name").asText();
        assertEquals(LIVE_PATH, container.at("/livenessProbe/httpGet/path").asText());
        assertEquals(READY_PATH, container.at("/readinessProbe/httpGet/path").asText());
        assertEquals(portName, container.at("/livenessProbe/httpGet/port").asText());
        assertEquals(portName, container.at("/readinessProbe/httpGet/port").asText());
        JsonNode paths = YAML.readTree(OPENAPI.toFile()).get("paths");
        assertTrue(paths.has(LIVE_PATH) && paths.has(READY_PATH), "openapi.yaml documents both probe paths");
        assertTrue(pod.at("/spec/securityContext/runAsNonRoot").asBoolean());
        assertSecretReferences(env);

        JsonNode service = kind(DEPLOY.resolve("kubernetes/api.yaml"), "Service");
        assertEquals(deployment.at("/spec/selector/matchLabels"), service.at("/spec/selector"));
        assertEquals(portName, service.at("/spec/ports/0/targetPort").asText());
    }

    @Test
    void the_retrain_cronjob_runs_one_valid_train_at_a_time_with_the_same_image_and_secret() throws IOException {
        JsonNode cron = kind(DEPLOY.resolve("kubernetes/retrain-cronjob.yaml"), "CronJob");
        assertEquals("Forbid", cron.at("/spec/concurrencyPolicy").asText());
        assertEquals(5, cron.at("/spec/schedule").asText().trim().split("\\s+").length);
        JsonNode pod = cron.at("/spec/jobTemplate/spec/template/spec");
        assertEquals("Never", pod.get("restartPolicy").asText());
        JsonNode container = pod.at("/containers/0");
        List<String> args = new ArrayList<>();
        container.get("args").forEach(a -> args.add(a.asText()));
        assertTrue(isValidTrain(args), "the CronJob runs a train the command accepts: " + args);
        assertSecretReferences(env(container));
        String apiImage = kind(DEPLOY.resolve("kubernetes/api.yaml"), "Deployment").at("/spec/template/spec/containers/0/image")
                .asText();
        assertEquals(apiImage, container.get("image").asText());
        assertEquals(imageName(apiImage), yamlDocuments(DEPLOY.resolve("kubernetes/kustomization.yaml")).get(0)
                .at("/images/0/name").asText());
        List<String> resources = new ArrayList<>();
        yamlDocuments(DEPLOY.resolve("kubernetes/kustomization.yaml")).get(0).get("resources")
                .forEach(r -> resources.add(r.asText()));
        for (String r : resources) {
            assertTrue(Files.isRegularFile(DEPLOY.resolve("kubernetes").resolve(r)), r);
        }
    }

    @Test
    void the_image_is_built_in_two_stages_runs_unprivileged_and_holds_the_jar_where_the_launcher_looks() throws IOException {
        String dockerfile = read(DEPLOY.resolve("Dockerfile"));
        List<String> from = lines(dockerfile, "FROM ");
        assertEquals(2, from.size(), from.toString());
        assertTrue(from.get(0).endsWith(" AS build"), from.get(0));
        assertTrue(from.get(1).contains("-jre"), "a JRE, not a JDK, at run time: " + from.get(1));
        assertTrue(read(DEPLOY.resolve("pom.xml")).contains("<finalName>twofold</finalName>"));
        assertTrue(dockerfile.contains("COPY --from=build /src/deploy/target/twofold.jar " + INSTALLED_JAR));
        assertTrue(read(DEPLOY.resolve("twofold")).contains(INSTALLED_JAR), "the launcher looks there");
        String user = lines(dockerfile, "USER ").get(0).substring("USER ".length()).trim();
        assertFalse(user.startsWith("root") || user.startsWith("0"), "runs as " + user);
        assertTrue(dockerfile.contains("ENTRYPOINT [\"/usr/local/bin/twofold\"]"));
        assertTrue(dockerfile.contains("COPY --from=build /src/deploy/twofold /usr/local/bin/twofold"));
        assertTrue(dockerfile.contains("CMD [\"serve\"]"));
        assertTrue(Files.isRegularFile(DEPLOY.resolve("Dockerfile.dockerignore")));
    }

    @Test
    void compose_runs_postgres_the_service_and_a_nightly_valid_train_against_the_same_database() throws IOException {
        JsonNode compose = yamlDocuments(DEPLOY.resolve("compose.yaml")).get(0);
        JsonNode services = compose.get("services");
        assertTrue(services.has("postgres") && services.has("api") && services.has("trainer"), services.toString());
        JsonNode api = services.get("api");
        assertEquals("serve", api.at("/command/0").asText());
        assertEquals("deploy/Dockerfile", api.at("/build/dockerfile").asText());
        assertTrue(Files.isRegularFile(DEPLOY.resolve(api.at("/build/context").asText()).resolve("deploy/Dockerfile")));
        String image = api.get("image").asText();
        assertEquals(image, services.at("/trainer/image").asText());
        assertEquals(image, kind(DEPLOY.resolve("kubernetes/api.yaml"), "Deployment")
                .at("/spec/template/spec/containers/0/image").asText(), "one image name everywhere");
        for (String s : List.of("api", "trainer")) {
            JsonNode env = services.get(s).get("environment");
            for (String v : DB_VARIABLES) {
                assertTrue(env.has(v), s + " sets " + v);
            }
            String host = env.get(DatabaseSettings.ENV_URL).asText().replaceFirst("^jdbc:postgresql://([^:/]+).*", "$1");
            assertTrue(services.has(host), s + " connects to the compose service " + host);
        }
        assertEquals(services.at("/api/environment/" + ServiceSettings.PORT_VARIABLE).asText(),
                api.at("/ports/0").asText().replaceFirst(".*:", ""), "the published port is the one the service listens on");
        String loop = services.at("/trainer/command/0").asText();
        Matcher train = Pattern.compile("/usr/local/bin/twofold (train[^;\\n]*);").matcher(loop);
        assertTrue(train.find(), loop);
        assertTrue(isValidTrain(Arrays.asList(train.group(1).trim().split("\\s+"))), train.group(1));
    }

    @Test
    void the_systemd_service_stops_cleanly_and_the_timer_starts_a_valid_train() throws IOException {
        Map<String, String> api = unit(DEPLOY.resolve("systemd/twofold.service"));
        assertEquals(INSTALLED_LAUNCHER + " serve", api.get("Service.ExecStart"));
        assertTrue(Arrays.asList(api.get("Service.SuccessExitStatus").split("\\s+"))
                .contains(Integer.toString(LauncherProcess.EXIT_AFTER_SIGTERM)), "143 after SIGTERM is a clean stop");
        assertEquals("/etc/twofold/twofold.env", api.get("Service.EnvironmentFile"));

        Map<String, String> timer = unit(DEPLOY.resolve("systemd/twofold-train.timer"));
        String target = timer.get("Timer.Unit");
        assertNotNull(timer.get("Timer.OnCalendar"));
        assertEquals("timers.target", timer.get("Install.WantedBy"));
        Map<String, String> train = unit(DEPLOY.resolve("systemd").resolve(target));
        assertEquals("oneshot", train.get("Service.Type"));
        String exec = train.get("Service.ExecStart");
        assertTrue(exec.startsWith(INSTALLED_LAUNCHER + " train"), exec);
        assertTrue(isValidTrain(Arrays.asList(exec.substring(INSTALLED_LAUNCHER.length() + 1).split("\\s+"))), exec);
        assertEquals(Integer.toString(TwofoldException.EXIT_LOCKED), train.get("Service.SuccessExitStatus"),
                "a run that found the lock taken changed nothing");
        Map<String, String> example = new HashMap<>();
        for (String line : read(DEPLOY.resolve("systemd/twofold.env.example")).split("\n")) {
            if (!line.isBlank() && !line.startsWith("#")) {
                example.put(line.substring(0, line.indexOf('=')), line.substring(line.indexOf('=') + 1));
            }
        }
        assertTrue(example.keySet().containsAll(DB_VARIABLES), example.keySet().toString());
    }

    @Test
    void the_crontab_line_runs_a_valid_train_with_the_environment_file() throws IOException {
        List<String> entries = new ArrayList<>();
        for (String line : read(DEPLOY.resolve("cron/twofold-train.cron")).split("\n")) {
            if (!line.isBlank() && !line.startsWith("#") && !line.matches("[A-Z_]+=.*")) {
                entries.add(line);
            }
        }
        assertEquals(1, entries.size(), entries.toString());
        String[] fields = entries.get(0).split("\\s+", 7);
        assertEquals("twofold", fields[5], "/etc/cron.d format: the sixth field is the user");
        String command = fields[6];
        assertTrue(command.contains(". /etc/twofold/twofold.env"), command);
        Matcher train = Pattern.compile(Pattern.quote(INSTALLED_LAUNCHER) + " (train[^>|;]*)").matcher(command);
        assertTrue(train.find(), command);
        assertTrue(isValidTrain(Arrays.asList(train.group(1).trim().split("\\s+"))), train.group(1));
    }

    // ---- helpers --------------------------------------------------------------------------------

    /** True when {@code args} (starting with "train") is a command line the train command accepts. */
    static boolean isValidTrain(List<String> args) {
        if (args.isEmpty() || !args.get(0).equals("train")) {
            return false;
        }
        try {
            new CommandLine(new TrainCommand(Map.of())).parseArgs(args.subList(1, args.size()).toArray(String[]::new));
            return true;
        } catch (CommandLine.ParameterException e) {
            return false;
        }
    }

    private static void assertSecretReferences(Map<String, JsonNode> env) throws IOException {
        JsonNode secret = kind(DEPLOY.resolve("kubernetes/secret.example.yaml"), "Secret");
        for (String v : DB_VARIABLES) {
            JsonNode ref = env.get(v).at("/valueFrom/secretKeyRef");
            assertEquals(secret.at("/metadata/name").asText(), ref.get("name").asText(), v);
            assertTrue(secret.get("stringData").has(ref.get("key").asText()), v + " reads a key the Secret has");
        }
    }

    private static Map<String, JsonNode> env(JsonNode container) {
        Map<String, JsonNode> env = new LinkedHashMap<>();
        container.get("env").forEach(e -> env.put(e.get("name").asText(), e));
        return env;
    }

    private static List<String> fieldNames(JsonNode object) {
        List<String> names = new ArrayList<>();
        object.fieldNames().forEachRemaining(names::add);
        return names;
    }

    private static String imageName(String image) {
        int colon = image.lastIndexOf(':');
        return colon < 0 ? image : image.substring(0, colon);
    }

    private static JsonNode kind(Path file, String kind) throws IOException {
        for (JsonNode d : yamlDocuments(file)) {
            if (kind.equals(d.path("kind").asText())) {
                return d;
            }
        }
        throw new AssertionError(file + " has no " + kind);
    }

    private static List<JsonNode> yamlDocuments(Path file) throws IOException {
        List<JsonNode> docs = new ArrayList<>();
        try (MappingIterator<JsonNode> it = YAML.readerFor(JsonNode.class).readValues(file.toFile())) {
            while (it.hasNext()) {
                JsonNode d = it.next();
                if (d != null && !d.isMissingNode() && !d.isNull()) {
                    docs.add(d);
                }
            }
        }
        return docs;
    }

    /** "Section.Key" → value of a systemd unit file (last one wins). */
    private static Map<String, String> unit(Path file) throws IOException {
        Map<String, String> values = new HashMap<>();
        String section = "";
        for (String line : read(file).split("\n")) {
            String l = line.trim();
            if (l.isEmpty() || l.startsWith("#") || l.startsWith(";")) {
                continue;
            }
            if (l.startsWith("[") && l.endsWith("]")) {
                section = l.substring(1, l.length() - 1);
            } else {
                int eq = l.indexOf('=');
                assertTrue(eq > 0, file + ": not Key=Value: " + l);
                values.put(section + "." + l.substring(0, eq), l.substring(eq + 1));
            }
        }
        return values;
    }

    private static List<Path> deploymentFiles(String... endings) throws IOException {
        try (Stream<Path> walk = Files.walk(DEPLOY)) {
            return walk.filter(Files::isRegularFile)
                    .filter(p -> !DEPLOY.relativize(p).startsWith("target") && !DEPLOY.relativize(p).startsWith("src"))
                    .filter(p -> Arrays.stream(endings).anyMatch(e -> p.getFileName().toString().endsWith(e)))
                    .sorted().toList();
        }
    }

    private static List<String> lines(String text, String prefix) {
        return Arrays.stream(text.split("\n")).filter(l -> l.startsWith(prefix)).toList();
    }

    private static String read(Path file) throws IOException {
        return Files.readString(file, StandardCharsets.UTF_8);
    }
}
