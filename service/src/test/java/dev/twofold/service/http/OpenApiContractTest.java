package dev.twofold.service.http;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ObjectNode;
import com.fasterxml.jackson.dataformat.yaml.YAMLFactory;
import com.networknt.schema.JsonMetaSchema;
import com.networknt.schema.JsonSchema;
import com.networknt.schema.JsonSchemaFactory;
import com.networknt.schema.NonValidationKeyword;
import com.networknt.schema.SpecVersion;
import com.networknt.schema.ValidationMessage;
import dev.twofold.db.access.ApiKeys;
import dev.twofold.db.access.KeyRole;
import dev.twofold.db.connect.Database;
import dev.twofold.db.testing.TestDatabases;
import dev.twofold.service.Service;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.access.KeyRing;
import dev.twofold.service.testing.ApiClient;
import dev.twofold.service.testing.Contract;
import dev.twofold.service.testing.KitchenDatabase;
import io.swagger.v3.oas.models.OpenAPI;
import io.swagger.v3.oas.models.PathItem;
import io.swagger.v3.oas.models.media.Schema;
import java.io.IOException;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.TreeSet;
import java.util.regex.Pattern;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Keeps openapi.yaml true against the running app (with a database and API keys, so every route
 * works as in production): the routes the app has are exactly the operations the file lists; every
 * answer, good or bad, has a listed status and content type, and its JSON body validates against
 * the schema the file gives for it (JSON Schema 2020-12, the dialect of OpenAPI 3.1, checked by an
 * independent validator). Who may call what is checked operation by operation in
 * {@code dev.twofold.service.access.AccessMatrixTest}.
 */
class OpenApiContractTest {

    private static final Path CONTRACT = Contract.FILE;
    private static final Set<String> METHODS = Set.of("GET", "POST", "PUT", "PATCH", "DELETE");
    private static final Pattern PARAMETER = Pattern.compile("\\{[^}]+}");

    @TempDir
    static Path dir;
    private static Database db;
    private static Service service;
    private static ApiClient api;
    private static String readKey;
    private static OpenAPI contract;
    private static JsonNode document;
    private static long model;

    @BeforeAll
    static void start() throws IOException {
        db = TestDatabases.fresh();
        KitchenDatabase.importRatings(db, dir);
        model = KitchenDatabase.publishModel(db);
        ApiKeys keys = new ApiKeys(db);
        String adminKey = keys.create("contract-admin", KeyRole.ADMIN).key();
        readKey = keys.create("contract-reader", KeyRole.READ).key();
        ServiceSettings settings = new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(5), Duration.ofHours(1));
        service = new Service(settings, new KeyRing(settings.retryAfterSeconds()), db);
        api = new ApiClient(service.start(), adminKey);
        contract = Contract.parse();
        document = new ObjectMapper(new YAMLFactory()).readTree(CONTRACT.toFile());
    }

    @AfterAll
    static void stop() {
        service.close();
        db.close();
    }

    @Test
    void the_served_document_is_the_repository_file_byte_for_byte() throws IOException {
        HttpResponse<String> served = api.get("/openapi.yaml");
        assertEquals(200, served.statusCode());
        assertEquals("application/yaml", served.headers().firstValue("Content-Type").orElse("").split(";")[0]);
        assertArrayEquals(Files.readAllBytes(CONTRACT), served.body().getBytes(StandardCharsets.UTF_8));
    }

    @Test
    void the_contract_is_openapi_3_1() {
        assertTrue(contract.getOpenapi().startsWith("3.1"), contract.getOpenapi());
    }

    @Test
    void the_app_has_exactly_the_routes_the_contract_lists() {
        Set<String> routes = new TreeSet<>();
        for (String route : service.routes()) {
            String method = route.substring(0, route.indexOf(' '));
            if (METHODS.contains(method)) {
                routes.add(method + " " + PARAMETER.matcher(route.substring(route.indexOf(' ') + 1)).replaceAll("{}"));
            }
        }
        Set<String> listed = new TreeSet<>();
        for (Map.Entry<String, PathItem> path : contract.getPaths().entrySet()) {
            for (PathItem.HttpMethod method : path.getValue().readOperationsMap().keySet()) {
                listed.add(method.name() + " " + PARAMETER.matcher(path.getKey()).replaceAll("{}"));
            }
        }
        assertEquals(listed, routes, "routes of the app (right) against operations of openapi.yaml (left)");
    }

    @Test
    void every_listed_operation_answers_as_listed_with_its_example_body() {
        List<Contract.Operation> operations = Contract.operations(contract);
        assertFalse(operations.isEmpty());
        for (Contract.Operation op : operations) {
            HttpResponse<String> response = call(op.method(), Contract.concrete(op.template(), model), op.example());
            assertAnswersAsListed(op.method(), op.template(), response);
        }
    }

    @Test
    void refusals_and_other_answers_are_listed_and_valid_too() {
        String stranger = "/v1/users/somebody-new/recommendations";
        assertAnswersAsListed("GET", "/v1/users/{user}/recommendations", api.get(stranger));
        assertAnswersAsListed("GET", "/v1/users/{user}/recommendations", api.get("/v1/users/ana/recommendations?count=0"));
        assertAnswersAsListed("GET", "/v1/users/{user}/recommendations",
                api.get("/v1/users/ana/recommendations?exclude=soup,cake&count=1000"));
        assertAnswersAsListed("GET", "/v1/items/{item}/similar", api.get("/v1/items/no-such-recipe/similar"));
        assertAnswersAsListed("GET", "/v1/items/{item}/similar", api.get("/v1/items/soup/similar?count=1001"));
        assertAnswersAsListed("POST", "/v1/predictions", api.postJson("/v1/predictions", "{\"pairs\": 3}"));
        assertAnswersAsListed("POST", "/v1/predictions", api.postJson("/v1/predictions",
                "{\"pairs\": [{\"user\": \"ana\", \"item\": \"jam\"}, {\"user\": \"zoe\", \"item\": \"soup\"}]}"));
        assertAnswersAsListed("POST", "/v1/ratings", api.postJson("/v1/ratings",
                "[{\"user\": \"ana\", \"item\": \"soup\", \"rating\": 9}, {\"user\": \"ana\"}]"));
        assertAnswersAsListed("POST", "/v1/ratings", api.postJson("/v1/ratings", "[{\"user\": "));
        assertAnswersAsListed("POST", "/v1/ratings", api.post("/v1/ratings", "text/plain",
                HttpRequest.BodyPublishers.ofString("ana,soup,4")));
        assertAnswersAsListed("POST", "/v1/trust", api.postJson("/v1/trust", "[{\"truster\": \"ana\", \"trustee\":"
                + " \"ana\"}]"));
        assertAnswersAsListed("GET", "/v1/models/{id}", api.get("/v1/models/424242"));
        assertAnswersAsListed("GET", "/v1/models/{id}", api.get("/v1/models/x"));
        assertAnswersAsListed("POST", "/v1/models/{id}/promote", api.send("POST", "/v1/models/424242/promote"));
        assertAnswersAsListed("POST", "/v1/models/rollback", api.send("POST", "/v1/models/rollback"));
        assertAnswersAsListed("DELETE", "/v1/users/{user}", api.send("DELETE", "/v1/users/nobody-stored"));
        assertAnswersAsListed("DELETE", "/v1/users/{user}", api.send("DELETE", "/v1/users/" + "x".repeat(129)));
        assertAnswersAsListed("GET", "/v1/users/{user}/recommendations",
                api.withKey(null).get("/v1/users/ana/recommendations"));
        assertAnswersAsListed("POST", "/v1/ratings", api.withKey("tf_not-a-key").postJson("/v1/ratings", "[]"));
        assertAnswersAsListed("POST", "/v1/models/rollback", api.withKey(readKey).send("POST", "/v1/models/rollback"));
        assertAnswersAsListed("DELETE", "/v1/users/{user}", api.withKey(readKey).send("DELETE", "/v1/users/ana"));
    }

    @Test
    void methods_not_listed_for_a_path_are_refused() {
        for (Map.Entry<String, PathItem> path : contract.getPaths().entrySet()) {
            Set<String> listed = new java.util.HashSet<>();
            path.getValue().readOperationsMap().keySet().forEach(m -> listed.add(m.name()));
            for (String method : METHODS) {
                if (!listed.contains(method)) {
                    HttpResponse<String> response = api.send(method, Contract.concrete(path.getKey(), model));
                    assertEquals(405, response.statusCode(), method + " " + path.getKey() + ": " + response.body());
                }
            }
        }
    }

    @Test
    void every_problem_type_is_documented() {
        Schema<?> problem = contract.getComponents().getSchemas().get("Problem");
        String described = ((Schema<?>) problem.getProperties().get("type")).getDescription();
        for (ProblemType type : ProblemType.values()) {
            String slug = type.uri().substring(ProblemType.URI_PREFIX.length());
            assertTrue(described.contains("`" + slug + "` (" + type.status()), slug + " is not in openapi.yaml");
        }
    }

    /** The status is listed for the operation, so is the content type, and a JSON body validates against its schema. */
    private static void assertAnswersAsListed(String method, String template, HttpResponse<String> response) {
        String where = method + " " + template + " -> " + response.statusCode();
        String pointer = "/paths/" + escape(template) + "/" + method.toLowerCase() + "/responses/"
                + response.statusCode();
        JsonNode declared = document.at(pointer);
        assertFalse(declared.isMissingNode(), where + " is not a listed answer: " + response.body());
        if (declared.has("$ref")) {
            pointer = declared.get("$ref").asText().substring(1);
            declared = document.at(pointer);
        }
        if (response.statusCode() == 204) {
            assertTrue(response.body().isEmpty(), where + " has a body: " + response.body());
            assertTrue(declared.path("content").isMissingNode(), where + " is listed with content");
            return;
        }
        String contentType = response.headers().firstValue("Content-Type").orElse("").split(";")[0].trim();
        assertTrue(declared.path("content").has(contentType), where + " answered " + contentType + ", not listed");
        if (contentType.endsWith("json")) {
            String schemaPointer = pointer + "/content/" + escape(contentType) + "/schema";
            Set<ValidationMessage> problems = schemaAt(schemaPointer).validate(ApiClient.json(response));
            assertTrue(problems.isEmpty(), where + " does not match its schema: " + problems + " in " + response.body());
        }
    }

    /** The schema at a JSON Pointer of the document, with its references resolved inside the document. */
    private static JsonSchema schemaAt(String pointer) {
        ObjectNode root = document.deepCopy();
        root.put("$ref", "#" + pointer);
        JsonMetaSchema dialect = JsonMetaSchema.builder(JsonMetaSchema.getV202012())
                .keywords(List.of(new NonValidationKeyword("openapi"), new NonValidationKeyword("info"),
                        new NonValidationKeyword("servers"), new NonValidationKeyword("tags"),
                        new NonValidationKeyword("paths"), new NonValidationKeyword("components")))
                .build();
        return JsonSchemaFactory.getInstance(SpecVersion.VersionFlag.V202012, b -> b.metaSchema(dialect))
                .getSchema(root);
    }

    /** RFC 6901: ~ as ~0, / as ~1. */
    private static String escape(String segment) {
        return segment.replace("~", "~0").replace("/", "~1");
    }

    private static HttpResponse<String> call(String method, String path, String body) {
        if (body == null) {
            return api.send(method, path);
        }
        return api.send(HttpRequest.newBuilder(api.uri(path)).header("Content-Type", "application/json")
                .method(method, HttpRequest.BodyPublishers.ofString(body)));
    }
}
