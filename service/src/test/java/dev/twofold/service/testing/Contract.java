package dev.twofold.service.testing;

import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.swagger.v3.oas.models.OpenAPI;
import io.swagger.v3.oas.models.PathItem;
import io.swagger.v3.oas.models.media.MediaType;
import io.swagger.v3.oas.models.security.SecurityRequirement;
import io.swagger.v3.parser.OpenAPIV3Parser;
import io.swagger.v3.parser.core.models.ParseOptions;
import io.swagger.v3.parser.core.models.SwaggerParseResult;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;

/** openapi.yaml, the HTTP contract, as tests walk it: every operation with what calling it takes. */
public final class Contract {

    /** Surefire runs in the module directory; the contract lives at the repository root. */
    public static final Path FILE = Path.of("..", "openapi.yaml");
    /** The security scheme of the API keys. */
    public static final String KEY_SCHEME = "apiKey";

    private Contract() {
    }

    /**
     * One operation of the contract.
     *
     * @param role    the role its {@code security} names, or null when it declares {@code security: []} (open)
     * @param example its JSON request body example, or null when it takes no body
     */
    public record Operation(String method, String template, String role, String example,
            io.swagger.v3.oas.models.Operation spec) {

        /** Whether the contract lists {@code status} among its answers. */
        public boolean lists(int status) {
            return spec.getResponses().containsKey(Integer.toString(status));
        }

        @Override
        public String toString() {
            return method + " " + template;
        }
    }

    /**
     * A path to call for a path template of the contract, on the {@code KitchenDatabase} data: the
     * erasure route erases eve (whose data no other check needs), the other user routes ask about
     * cy, item routes about soup, model routes about {@code model}.
     */
    public static String concrete(String template, long model) {
        return template.replace("{user}", template.equals("/v1/users/{user}") ? "eve" : "cy").replace("{item}", "soup")
                .replace("{id}", Long.toString(model)).replace("{name}", "dashboard.css");
    }

    /** The contract parsed with references resolved; fails the test when the parser has complaints. */
    public static OpenAPI parse() {
        ParseOptions options = new ParseOptions();
        options.setResolve(true);
        options.setResolveFully(true);
        SwaggerParseResult parsed = new OpenAPIV3Parser().readLocation(FILE.toString(), null, options);
        assertTrue(parsed.getMessages() == null || parsed.getMessages().isEmpty(), "parser: " + parsed.getMessages());
        assertNotNull(parsed.getOpenAPI());
        return parsed.getOpenAPI();
    }

    /**
     * Every operation. Each must say who may call it: {@code security: []} or exactly one
     * requirement of {@link #KEY_SCHEME} naming one role; anything else fails the test.
     */
    public static List<Operation> operations(OpenAPI contract) {
        List<Operation> all = new ArrayList<>();
        for (Map.Entry<String, PathItem> path : contract.getPaths().entrySet()) {
            for (Map.Entry<PathItem.HttpMethod, io.swagger.v3.oas.models.Operation> op
                    : path.getValue().readOperationsMap().entrySet()) {
                String where = op.getKey() + " " + path.getKey();
                List<SecurityRequirement> security = op.getValue().getSecurity();
                assertNotNull(security, where + " does not say who may call it (security)");
                String role = null;
                if (!security.isEmpty()) {
                    assertTrue(security.size() == 1 && security.get(0).containsKey(KEY_SCHEME)
                            && security.get(0).get(KEY_SCHEME).size() == 1,
                            where + " must name exactly one role of " + KEY_SCHEME + ": " + security);
                    role = security.get(0).get(KEY_SCHEME).get(0);
                }
                all.add(new Operation(op.getKey().name(), path.getKey(), role, example(op.getValue()), op.getValue()));
            }
        }
        return all;
    }

    private static String example(io.swagger.v3.oas.models.Operation op) {
        if (op.getRequestBody() == null) {
            return null;
        }
        MediaType json = op.getRequestBody().getContent().get("application/json");
        assertNotNull(json.getExample(), "the request body needs an example to be checked");
        return json.getExample() instanceof String s ? s : io.swagger.v3.core.util.Json.pretty(json.getExample());
    }
}
