package dev.twofold.service.http;

import dev.twofold.db.BadInputException;
import dev.twofold.db.DatabaseUnavailableException;
import io.javalin.config.RoutesConfig;
import io.javalin.http.Context;
import io.javalin.http.HttpResponseException;
import io.javalin.http.HttpStatus;
import java.util.List;
import java.util.Map;
import java.util.function.Consumer;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * The one place where failures become HTTP responses: every error the API returns is an RFC 9457
 * {@code application/problem+json} object with {@code type}, {@code title}, {@code status},
 * {@code detail} and {@code instance} (the request path), plus {@code errors} when a batch had
 * several problems.
 */
final class Problems {

    static final String CONTENT_TYPE = "application/problem+json";
    /** Type of problems that mean no more than their HTTP status (RFC 9457 §4.2.1). */
    static final String ABOUT_BLANK = "about:blank";

    private static final Logger LOG = LoggerFactory.getLogger(Problems.class);

    private final int retryAfterSeconds;
    private final Consumer<String> databaseLost;

    /**
     * @param retryAfterSeconds Retry-After sent with "try again later" problems (503)
     * @param databaseLost      told when a request found the database unreachable, with the reason
     */
    Problems(int retryAfterSeconds, Consumer<String> databaseLost) {
        this.retryAfterSeconds = retryAfterSeconds;
        this.databaseLost = databaseLost;
    }

    /**
     * Routes every exception through {@link #handle} (Javalin's own {@link HttpResponseException}s
     * reach a handler only when one is registered for that class), and turns Javalin's 404 (no
     * such route) and 405 (route exists, method does not), which are responses rather than
     * exceptions, into problems; a response that already is a problem is left alone.
     */
    void register(RoutesConfig routes) {
        routes.exception(Exception.class, this::handle);
        routes.exception(HttpResponseException.class, this::handle);
        for (int status : new int[] {404, 405}) {
            routes.error(status, ctx -> {
                String current = ctx.res().getContentType();
                if (current == null || !current.startsWith(CONTENT_TYPE)) {
                    sendStatus(ctx, status, null);
                }
            });
        }
    }

    void handle(Exception failure, Context ctx) {
        if (failure instanceof ProblemException p) {
            send(ctx, p.type(), p.detail(), p.headers());
        } else if (failure instanceof BadInputException bad) {
            send(ctx, ProblemType.INVALID_BODY.uri(), ProblemType.INVALID_BODY.title(), ProblemType.INVALID_BODY.status(),
                    bad.getMessage(), Map.of(), bad.problems());
        } else if (failure instanceof DatabaseUnavailableException down) {
            LOG.warn("{} {}: {}", ctx.method(), ctx.path(), down.getMessage());
            databaseLost.accept(down.getMessage());
            send(ctx, ProblemType.DATABASE_UNAVAILABLE, "the database cannot be reached; try again later",
                    Map.of("Retry-After", Integer.toString(retryAfterSeconds)));
        } else if (failure instanceof HttpResponseException http) {
            sendStatus(ctx, http.getStatus(), http.getMessage());
        } else {
            LOG.error("{} {} failed", ctx.method(), ctx.path(), failure);
            send(ctx, ProblemType.INTERNAL, "the request failed inside the service; the service log has the details",
                    Map.of());
        }
    }

    /** A problem for a bare HTTP status raised by the framework (unknown route, wrong method, ...). */
    void sendStatus(Context ctx, int status, String message) {
        switch (status) {
            case 404 -> send(ctx, ProblemType.NOT_FOUND, "no resource at " + ctx.method() + " " + ctx.path()
                    + "; GET /openapi.yaml lists the API", Map.of());
            case 405 -> send(ctx, ProblemType.METHOD_NOT_ALLOWED, ctx.method() + " is not allowed on " + ctx.path(),
                    Map.of());
            case 413 -> send(ctx, ProblemType.BODY_TOO_LARGE, "the request body is larger than "
                    + Limits.MAX_BODY_BYTES + " bytes", Map.of());
            default -> {
                String title = statusTitle(status);
                send(ctx, ABOUT_BLANK, title, status, message == null || message.isBlank() ? title : message,
                        Map.of(), List.of());
            }
        }
    }

    void send(Context ctx, ProblemType type, String detail, Map<String, String> headers) {
        send(ctx, type.uri(), type.title(), type.status(), detail, headers, List.of());
    }

    private static void send(Context ctx, String type, String title, int status, String detail,
            Map<String, String> headers, List<String> errors) {
        headers.forEach(ctx::header);
        ctx.attribute(ProblemType.REQUEST_ATTRIBUTE, type);
        ctx.status(status).contentType(CONTENT_TYPE).result(json(type, title, status, detail, ctx.path(), errors));
    }

    /** The problem object as JSON bytes; {@code instance} is left out when null. */
    static byte[] json(String type, String title, int status, String detail, String instance, List<String> errors) {
        return JsonOutput.bytes(json -> {
            json.writeStartObject();
            json.writeStringField("type", type);
            json.writeStringField("title", title);
            json.writeNumberField("status", status);
            json.writeStringField("detail", detail);
            if (instance != null) {
                json.writeStringField("instance", instance);
            }
            if (!errors.isEmpty()) {
                json.writeArrayFieldStart("errors");
                for (String error : errors) {
                    json.writeString(error);
                }
                json.writeEndArray();
            }
            json.writeEndObject();
        });
    }

    /** Title of a bare HTTP status: its reason phrase. */
    static String statusTitle(int status) {
        HttpStatus known = HttpStatus.forStatus(status);
        return known == HttpStatus.UNKNOWN ? "HTTP " + status : known.getMessage();
    }
}
