package dev.twofold.service.http;

/**
 * Every kind of problem the HTTP API reports (RFC 9457), with its status and title. The
 * {@link #uri()} is the problem's {@code type}: a tag URI (RFC 4151), an identifier clients can
 * switch on, not a page to fetch.
 */
public enum ProblemType {
    INVALID_PARAMETER(400, "invalid-parameter", "Invalid parameter"),
    MALFORMED_JSON(400, "malformed-json", "Malformed JSON"),
    INVALID_BODY(400, "invalid-body", "Invalid request body"),
    UNAUTHORIZED(401, "unauthorized", "Unauthorized"),
    FORBIDDEN(403, "forbidden", "Forbidden"),
    NOT_FOUND(404, "not-found", "Not found"),
    METHOD_NOT_ALLOWED(405, "method-not-allowed", "Method not allowed"),
    MODEL_STATE(409, "model-state", "Model state does not allow this"),
    BODY_TOO_LARGE(413, "body-too-large", "Request body too large"),
    BATCH_TOO_LARGE(413, "batch-too-large", "Batch too large"),
    UNSUPPORTED_MEDIA_TYPE(415, "unsupported-media-type", "Unsupported media type"),
    INTERNAL(500, "internal", "Internal error"),
    MODEL_NOT_LOADED(503, "model-not-loaded", "No model loaded"),
    DATABASE_UNAVAILABLE(503, "database-unavailable", "Database unavailable");

    /** Prefix of every problem type URI. */
    public static final String URI_PREFIX = "tag:twofold.dev,2026:problem:";
    /**
     * Request attribute holding the {@code type} of the problem a response carries, set where the
     * problem is written, so metrics and the request log can count errors by type.
     */
    public static final String REQUEST_ATTRIBUTE = "twofold.problem.type";

    private final int status;
    private final String slug;
    private final String title;

    ProblemType(int status, String slug, String title) {
        this.status = status;
        this.slug = slug;
        this.title = title;
    }

    public int status() {
        return status;
    }

    public String title() {
        return title;
    }

    public String uri() {
        return URI_PREFIX + slug;
    }
}
