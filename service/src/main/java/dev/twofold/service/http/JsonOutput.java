package dev.twofold.service.http;

import com.fasterxml.jackson.core.JsonFactory;
import com.fasterxml.jackson.core.JsonGenerator;
import com.fasterxml.jackson.core.StreamReadFeature;
import io.javalin.http.Context;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.UncheckedIOException;

/**
 * Writes response bodies with Jackson's streaming generator straight from the serving arrays: no
 * response objects, no reflection.
 */
final class JsonOutput {

    static final String JSON = "application/json";

    /** Shared and thread-safe; parsers it makes reject duplicate keys. */
    static final JsonFactory FACTORY = JsonFactory.builder()
            .enable(StreamReadFeature.STRICT_DUPLICATE_DETECTION)
            .build();

    @FunctionalInterface
    interface Body {
        void writeTo(JsonGenerator json) throws IOException;
    }

    private JsonOutput() {
    }

    /** Sends {@code body} with the given status and content type. */
    static void send(Context ctx, int status, String contentType, Body body) {
        ctx.status(status).contentType(contentType).result(bytes(body));
    }

    static byte[] bytes(Body body) {
        ByteArrayOutputStream out = new ByteArrayOutputStream(256);
        try (JsonGenerator json = FACTORY.createGenerator(out)) {
            body.writeTo(json);
        } catch (IOException e) {
            throw new UncheckedIOException("writing a JSON response", e);
        }
        return out.toByteArray();
    }
}
