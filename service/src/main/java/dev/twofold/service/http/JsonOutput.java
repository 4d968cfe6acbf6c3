package dev.twofold.service.http;

import com.fasterxml.jackson.core.JsonFactory;
import com.fasterxml.jackson.core.JsonGenerator;
import com.fasterxml.jackson.core.StreamReadFeature;
import com.fasterxml.jackson.core.StreamWriteFeature;
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

    /**
     * Shared and thread-safe; parsers it makes reject duplicate keys; generators write floats with
     * the shortest-digits algorithm (the JDK's own float-to-text is a measurable share of a
     * recommendation's cost; either text reads back as the same float).
     */
    static final JsonFactory FACTORY = JsonFactory.builder()
            .enable(StreamReadFeature.STRICT_DUPLICATE_DETECTION)
            .enable(StreamWriteFeature.USE_FAST_DOUBLE_WRITER)
            .build();

    @FunctionalInterface
    interface Body {
        void writeTo(JsonGenerator json) throws IOException;
    }

    private JsonOutput() {
    }

    /** Sends {@code body} with the given status and content type. */
    static void send(Context ctx, int status, String contentType, Body body) {
        write(ctx.status(status).contentType(contentType), bytes(body));
    }

    /**
     * Writes a finished body straight to the response stream (compressed there as the client
     * allows). Handing it over as the context's result instead would have the framework copy it
     * through a fresh 32 KiB buffer per response: most of the serving path's garbage, and with it
     * most young collections, each of which stalls every request in flight. The body is complete
     * before the first byte goes out, so a failure while building it still becomes a problem
     * response.
     */
    static void write(Context ctx, byte[] body) {
        try {
            ctx.outputStream().write(body);
        } catch (IOException e) {
            throw new UncheckedIOException("writing a response body", e);
        }
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
