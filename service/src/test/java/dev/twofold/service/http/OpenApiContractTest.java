package dev.twofold.service.http;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import dev.twofold.service.Service;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.testing.ApiClient;
import dev.twofold.service.testing.KitchenModel;
import io.swagger.v3.oas.models.OpenAPI;
import io.swagger.v3.oas.models.Operation;
import io.swagger.v3.oas.models.PathItem;
import io.swagger.v3.oas.models.media.MediaType;
import io.swagger.v3.oas.models.media.Schema;
import io.swagger.v3.oas.models.responses.ApiResponse;
import io.swagger.v3.parser.OpenAPIV3Parser;
import io.swagger.v3.parser.core.models.ParseOptions;
import io.swagger.v3.parser.core.models.SwaggerParseResult;
import java.io.IOException;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.List;
import java.util.Map;
import java.util.Set;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/** Keeps openapi.yaml true: it parses cleanly, and every operation it lists behaves as listed on the running app. */
class OpenApiContractTest {

    /** Surefire runs in the module directory; the contract lives at the repository root. */
    private static final Path CONTRACT = Path.of("..", "openapi.yaml");
    private static final Set<String> METHODS = Set.of("GET", "POST", "PUT", "PATCH", "DELETE");

    private static Service service;
    private static ApiClient api;
    private static OpenAPI contract;

    @BeforeAll
    static void start() {
        service = new Service(new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(5), Duration.ofSeconds(1)));
        service.install(KitchenModel.build());
        api = new ApiClient(service.start());
        ParseOptions options = new ParseOptions();
        options.setResolve(true);
        options.setResolveFully(true);
        SwaggerParseResult parsed = new OpenAPIV3Parser().readLocation(CONTRACT.toString(), null, options);
        assertTrue(parsed.getMessages() == null || parsed.getMessages().isEmpty(), "parser: " + parsed.getMessages());
        contract = parsed.getOpenAPI();
        assertNotNull(contract);
    }

    @AfterAll
    static void stop() {
        service.close();
    }

    @Test
    void the_served_document_is_the_repository_file_byte_for_byte() throws IOException {
        HttpResponse<String> served = api.get("/openapi.yaml");
        assertEquals(200, served.statusCode());
        assertEquals("application/yaml", served.headers().firstValue("Content-Type").orElse("").split(";")[0]);
        assertArrayEquals(Files.readAllBytes(CONTRACT), served.body().getBytes(java.nio.charset.StandardCharsets.UTF_8));
    }

    @Test
    void the_contract_is_openapi_3_1() {
        assertTrue(contract.getOpenapi().startsWith("3.1"), contract.getOpenapi());
    }

    @Test
    void every_listed_operation_answers_with_a_listed_status_and_the_required_fields() {
        assertFalse(contract.getPaths().isEmpty());
        for (Map.Entry<String, PathItem> path : contract.getPaths().entrySet()) {
            for (Map.Entry<PathItem.HttpMethod, Operation> op : path.getValue().readOperationsMap().entrySet()) {
                String where = op.getKey() + " " + path.getKey();
                HttpResponse<String> response = call(op.getKey().name(), concrete(path.getKey()), op.getValue());
                ApiResponse declared = op.getValue().getResponses().get(Integer.toString(response.statusCode()));
                assertNotNull(declared, where + " answered " + response.statusCode() + ", not listed: "
                        + response.body());
                String contentType = response.headers().firstValue("Content-Type").orElse("").split(";")[0].trim();
                MediaType media = declared.getContent() == null ? null : declared.getContent().get(contentType);
                assertNotNull(media, where + " answered " + contentType + ", not listed");
                if (contentType.endsWith("json")) {
                    assertRequiredFields(where, media.getSchema(), ApiClient.json(response));
                }
            }
        }
    }

    @Test
    void methods_not_listed_for_a_path_are_refused() {
        for (Map.Entry<String, PathItem> path : contract.getPaths().entrySet()) {
            Set<String> listed = new java.util.HashSet<>();
            path.getValue().readOperationsMap().keySet().forEach(m -> listed.add(m.name()));
            for (String method : METHODS) {
                if (!listed.contains(method)) {
                    HttpResponse<String> response = api.send(method, concrete(path.getKey()));
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

    private static HttpResponse<String> call(String method, String path, Operation op) {
        if (op.getRequestBody() == null) {
            return api.send(method, path);
        }
        MediaType json = op.getRequestBody().getContent().get("application/json");
        assertNotNull(json.getExample(), method + " " + path + " needs a request example to be checked");
        String body = json.getExample() instanceof String s ? s : io.swagger.v3.core.util.Json.pretty(json.getExample());
        return api.send(HttpRequest.newBuilder(api.uri(path)).header("Content-Type", "application/json")
                .method(method, HttpRequest.BodyPublishers.ofString(body)));
    }

    private static String concrete(String template) {
        return template.replace("{user}", "cy").replace("{name}", "dashboard.css");
    }

    @SuppressWarnings("rawtypes")
    private static void assertRequiredFields(String where, Schema schema, JsonNode value) {
        if (schema == null) {
            return;
        }
        List<?> required = schema.getRequired();
        if (required != null) {
            for (Object field : required) {
                assertTrue(value.has(field.toString()), where + ": '" + field + "' missing in " + value);
            }
        }
        if (schema.getProperties() != null && value.isObject()) {
            for (Object entry : schema.getProperties().entrySet()) {
                Map.Entry e = (Map.Entry) entry;
                JsonNode child = value.get(e.getKey().toString());
                if (child != null && !child.isNull()) {
                    assertRequiredFields(where + "." + e.getKey(), (Schema) e.getValue(), child);
                }
            }
        }
        if (schema.getItems() != null && value.isArray()) {
            for (JsonNode element : value) {
                assertRequiredFields(where + "[]", schema.getItems(), element);
            }
        }
    }
}
