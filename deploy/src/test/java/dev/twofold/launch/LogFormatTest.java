package dev.twofold.launch;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import ch.qos.logback.classic.LoggerContext;
import ch.qos.logback.classic.joran.JoranConfigurator;
import ch.qos.logback.classic.util.LogbackMDCAdapter;
import ch.qos.logback.core.joran.spi.JoranException;
import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.PrintStream;
import java.net.URL;
import java.nio.charset.StandardCharsets;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.slf4j.Logger;

/** The launcher's logback.xml, configured as a running process would be, with each TWOFOLD_LOG_FORMAT. */
class LogFormatTest {

    private static final ObjectMapper JSON = new ObjectMapper();
    private static final String REQUEST_LOGGER = "dev.twofold.request";

    @Test
    void by_default_a_request_line_is_readable_text_carrying_the_request_id() throws Exception {
        String out = logARequest(null);
        List<String> lines = out.lines().toList();
        assertEquals(2, lines.size(), out);
        assertTrue(lines.get(0).matches("\\d\\d:\\d\\d:\\d\\d\\.\\d{3} INFO  dev.twofold.request - \\[7f3a\\] "
                + "GET /v1/users/cook-1/recommendations 200 1.25 ms id=7f3a"), lines.get(0));
        // a line with no request running has no empty brackets
        assertTrue(lines.get(1).endsWith("INFO  d.t.service.Service - serving model 3 (100 items)"), lines.get(1));
    }

    @Test
    void json_writes_one_object_per_line_with_the_id_and_the_request_fields() throws Exception {
        for (String setting : List.of("json", " JSON ")) {
            String out = logARequest(setting);
            List<String> lines = out.lines().toList();
            assertEquals(2, lines.size(), out);
            JsonNode request = JSON.readTree(lines.get(0));
            assertEquals("INFO", request.path("level").asText());
            assertEquals(REQUEST_LOGGER, request.path("loggerName").asText());
            assertEquals("GET /v1/users/cook-1/recommendations 200 1.25 ms id=7f3a",
                    request.path("formattedMessage").asText());
            assertTrue(request.path("timestamp").isNumber(), request.toString());
            assertEquals("7f3a", request.path("mdc").path("request_id").asText());
            assertTrue(request.path("kvpList").toString().contains("\"route\":\"/v1/users/{user}/recommendations\""),
                    request.toString());
            JsonNode plain = JSON.readTree(lines.get(1));
            assertEquals("serving model 3 (100 items)", plain.path("formattedMessage").asText());
            assertFalse(plain.has("arguments") || plain.has("context") || plain.has("sequenceNumber"), plain.toString());
        }
    }

    @Test
    void an_unknown_format_logs_as_text_and_names_the_setting() throws Exception {
        String out = logARequest("xml");
        assertTrue(out.startsWith("TWOFOLD_LOG_FORMAT='xml' is not a log format; use text (the default) or json;"
                + " logging as text"), out);
        assertTrue(out.contains("INFO  dev.twofold.request - [7f3a] GET"), out);
    }

    @Test
    void the_setting_is_read_without_regard_to_case_or_blanks() {
        assertEquals("text", LogFormat.choose(null));
        assertEquals("text", LogFormat.choose("  "));
        assertEquals("json", LogFormat.choose("Json"));
        assertEquals("text", LogFormat.choose("TEXT "));
        assertNull(LogFormat.choose("yaml"));
        assertFalse("json".equals(LogFormat.choose("jsonl")));
    }

    /** Configures a fresh logging context from logback.xml and logs what a request and the service would. */
    private static String logARequest(String format) throws JoranException, IOException {
        URL config = LogFormatTest.class.getClassLoader().getResource("logback.xml");
        assertTrue(config != null && config.getPath().contains("deploy"), "not the launcher's logback.xml: " + config);
        PrintStream stderr = System.err;
        ByteArrayOutputStream captured = new ByteArrayOutputStream();
        LoggerContext context = new LoggerContext();
        context.setMDCAdapter(new LogbackMDCAdapter());
        try {
            System.setErr(new PrintStream(captured, true, StandardCharsets.UTF_8));
            if (format != null) {
                context.putProperty(LogFormat.VARIABLE, format);
            }
            JoranConfigurator configurator = new JoranConfigurator();
            configurator.setContext(context);
            configurator.doConfigure(config);
            Logger requests = context.getLogger(REQUEST_LOGGER);
            // each logging context keeps its own MDC; a service's request thread fills the default one
            context.getMDCAdapter().put("request_id", "7f3a");
            try {
                requests.atInfo().addKeyValue("request_id", "7f3a").addKeyValue("route", "/v1/users/{user}/recommendations")
                        .log("GET /v1/users/cook-1/recommendations 200 1.25 ms id=7f3a");
            } finally {
                context.getMDCAdapter().remove("request_id");
            }
            context.getLogger("dev.twofold.service.Service").info("serving model {} ({} items)", 3, 100);
        } finally {
            context.stop();
            System.setErr(stderr);
        }
        return captured.toString(StandardCharsets.UTF_8);
    }
}
